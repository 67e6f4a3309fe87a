import { describe, expect, it } from 'vitest';
import { changedFields, emptyFormValues, fieldErrorsOf, formValuesOf, sameValues } from './entry-form';
import { entryFields } from './schemas/entries';

describe('entry form values', () => {
	it('round-trips a stored entry through the form and back through the schema', () => {
		const stored = entryFields.parse({ title: 'R8 open', componentKind: 'resistor', symptom: 'Output high', tags: ['divider', 'smps'] });
		const values = formValuesOf(stored);
		expect(values.tags).toBe('divider, smps');
		expect(entryFields.parse(values)).toEqual(stored);
	});

	it('treats tag spelling and surrounding spaces as no change, and names the fields that did change', () => {
		const a = { ...emptyFormValues(), title: 'R8 open', tags: 'divider, smps' };
		const b = { ...a, title: ' R8 open ', tags: 'DIVIDER smps' };
		expect(sameValues(a, b)).toBe(true);
		expect(changedFields(a, { ...b, fix: 'Replace R8' })).toEqual(['fix']);
	});

	it('maps schema issues to the fields they belong to', () => {
		const r = entryFields.safeParse({ ...emptyFormValues(), componentKind: 'valve' });
		expect(r.success).toBe(false);
		const errors = fieldErrorsOf(r.error!.issues);
		expect(Object.keys(errors).sort()).toEqual(['componentKind', 'symptom', 'title']);
		expect(errors.title).toEqual(['Enter a title.']);
		expect(fieldErrorsOf([{ path: 'tags.0', message: 'bad tag' }])).toEqual({ tags: ['bad tag'] });
	});
});
