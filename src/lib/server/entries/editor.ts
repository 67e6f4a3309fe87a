import { type ActionFailure, fail } from '@sveltejs/kit';
import { type EntryFormValues, fieldErrorsOf, formValuesOf } from '../../entry-form';
import { entryFields, type EntryFields } from '../../schemas/entries';
import type { Entry } from './queries';

/**
 * What the editor's form actions share: reading the posted fields, and the `fail()` shapes the
 * page renders beside each field. Everything typed comes back in `values`, so nothing is lost.
 */
export type EditorFailure =
	| { values: EntryFormValues; fieldErrors: ReturnType<typeof fieldErrorsOf>; message: string }
	| { values: EntryFormValues; conflict: StoredVersion; message: string };

/** The stored side of a conflict, as the editor shows it beside the writer's own version. */
export interface StoredVersion {
	version: number;
	values: EntryFormValues;
	updatedAt: string;
}

export function storedVersionOf(entry: Entry): StoredVersion {
	return { version: entry.version, values: formValuesOf(entry), updatedAt: entry.updatedAt.toISOString() };
}

export type ParsedFields = { ok: true; fields: EntryFields } | { ok: false; failure: ActionFailure<EditorFailure> };

export function parseEntryFields(values: EntryFormValues): ParsedFields {
	const parsed = entryFields.safeParse(values);
	if (parsed.success) return { ok: true, fields: parsed.data };
	return {
		ok: false,
		failure: fail(400, { values, fieldErrors: fieldErrorsOf(parsed.error.issues), message: 'Nothing was saved: correct the fields marked below.' })
	};
}
