import { diffLines, diffWordsWithSpace } from 'diff';
import type { EntryFields } from '../schemas/entries';

/** The fields of a revision in the order the history shows them, with their on-screen names. */
export const DIFF_FIELDS: readonly { key: keyof EntryFields; label: string; long: boolean }[] = [
	{ key: 'title', label: 'Title', long: false },
	{ key: 'componentKind', label: 'Component kind', long: false },
	{ key: 'partNumber', label: 'Part number', long: false },
	{ key: 'package', label: 'Package', long: false },
	{ key: 'assembly', label: 'Assembly', long: false },
	{ key: 'testPoint', label: 'Test point', long: false },
	{ key: 'symptom', label: 'Symptom', long: false },
	{ key: 'symptomDetail', label: 'Symptom detail', long: true },
	{ key: 'cause', label: 'Root cause', long: true },
	{ key: 'fix', label: 'Fix', long: true },
	{ key: 'body', label: 'Notes', long: true },
	{ key: 'tags', label: 'Tags', long: false }
];

export interface DiffPart {
	kind: 'same' | 'added' | 'removed';
	text: string;
}

export interface FieldDiff {
	key: keyof EntryFields;
	label: string;
	parts: DiffPart[];
}

function parts(changes: { added?: boolean; removed?: boolean; value: string }[]): DiffPart[] {
	return changes.map((c) => ({ kind: c.added ? 'added' : c.removed ? 'removed' : 'same', text: c.value }));
}

const asText = (v: unknown) => (Array.isArray(v) ? v.join(', ') : String(v ?? ''));

/**
 * What changed from revision `a` to revision `b`, field by field: Markdown fields line by line,
 * short fields word by word. Fields that did not change are left out.
 */
export function diffRevisions(a: Partial<EntryFields>, b: Partial<EntryFields>): FieldDiff[] {
	const out: FieldDiff[] = [];
	for (const f of DIFF_FIELDS) {
		const before = asText(a[f.key]);
		const after = asText(b[f.key]);
		if (before === after) continue;
		const changes = f.long
			? diffLines(before.endsWith('\n') || !before ? before : `${before}\n`, after.endsWith('\n') || !after ? after : `${after}\n`)
			: diffWordsWithSpace(before, after);
		out.push({ key: f.key, label: f.label, parts: parts(changes) });
	}
	return out;
}
