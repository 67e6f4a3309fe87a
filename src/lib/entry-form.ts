import { EDITABLE_FIELDS, type EntryFields } from './schemas/entries';

/**
 * An entry as the editor's form holds it: every field a string, tags comma-separated, exactly
 * as typed. Shared by the form actions (to echo input back on error) and the browser's editor.
 */
export const FORM_FIELDS = EDITABLE_FIELDS;
export type FormField = (typeof FORM_FIELDS)[number];
export type EntryFormValues = Record<FormField, string>;
export type FieldErrors = Partial<Record<FormField, string[]>>;

export const FIELD_LABELS: Readonly<Record<FormField, string>> = {
	title: 'Title',
	componentKind: 'Component kind',
	partNumber: 'Part number',
	package: 'Package',
	assembly: 'Assembly',
	testPoint: 'Test point',
	symptom: 'Symptom, in one line',
	symptomDetail: 'Symptom in detail',
	cause: 'Root cause',
	fix: 'Fix',
	body: 'Notes',
	tags: 'Tags'
};

export function emptyFormValues(): EntryFormValues {
	return Object.fromEntries(FORM_FIELDS.map((k) => [k, ''])) as EntryFormValues;
}

/** A stored entry's fields as form values. */
export function formValuesOf(entry: EntryFields | Record<FormField, unknown>): EntryFormValues {
	const out = emptyFormValues();
	for (const k of FORM_FIELDS) {
		const v = (entry as Record<string, unknown>)[k];
		out[k] = Array.isArray(v) ? v.join(', ') : typeof v === 'string' ? v : '';
	}
	return out;
}

/** Reads the editor's fields from a posted form (anything missing is empty). */
export function formValuesFrom(form: FormData): EntryFormValues {
	const out = emptyFormValues();
	for (const k of FORM_FIELDS) {
		const v = form.get(k);
		out[k] = typeof v === 'string' ? v : '';
	}
	return out;
}

/** Whether two sets of form values say the same thing (tags compared after normalising). */
export function sameValues(a: EntryFormValues, b: EntryFormValues): boolean {
	return FORM_FIELDS.every((k) => (k === 'tags' ? normTags(a.tags) === normTags(b.tags) : a[k].trim() === b[k].trim()));
}

/** The fields whose values differ, in form order. */
export function changedFields(a: EntryFormValues, b: EntryFormValues): FormField[] {
	return FORM_FIELDS.filter((k) => (k === 'tags' ? normTags(a.tags) !== normTags(b.tags) : a[k].trim() !== b[k].trim()));
}

const normTags = (s: string) =>
	s
		.split(/[,\s]+/)
		.map((t) => t.trim().toLowerCase())
		.filter(Boolean)
		.join(',');

/** zod issues (or the API's `{ path, message }` issues) as per-field messages. */
export function fieldErrorsOf(issues: readonly { path: string | readonly PropertyKey[]; message: string }[]): FieldErrors {
	const out: FieldErrors = {};
	for (const issue of issues) {
		const key = (typeof issue.path === 'string' ? issue.path.split('.')[0] : String(issue.path[0] ?? '')) as FormField;
		if (!(FORM_FIELDS as readonly string[]).includes(key)) continue;
		(out[key] ??= []).push(issue.message);
	}
	return out;
}
