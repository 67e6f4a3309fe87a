import { describe, expect, it } from 'vitest';
import { entryFields, entryUpdate, markdownPreview, LIMITS } from './entries';

describe('entry schemas', () => {
	it('lets an update name only the fields it changes, so the others keep their stored values', () => {
		const parsed = entryUpdate.parse({ version: '3', fix: 'Replace U4' });
		expect(parsed).toEqual({ version: 3, fix: 'Replace U4' });
		expect('partNumber' in parsed).toBe(false);
		expect('tags' in parsed).toBe(false);
	});

	it('still fills the optional fields of a new entry with empty values', () => {
		expect(entryFields.parse({ title: 'T', componentKind: 'diode', symptom: 'S' })).toMatchObject({ partNumber: '', body: '', tags: [] });
	});

	it('limits preview text to what an entry may store', () => {
		expect(markdownPreview.safeParse({ body: 'x'.repeat(LIMITS.body) }).success).toBe(true);
		expect(markdownPreview.safeParse({ body: 'x'.repeat(LIMITS.body + 1) }).success).toBe(false);
		expect(markdownPreview.safeParse({ cause: 'x'.repeat(LIMITS.markdown + 1) }).success).toBe(false);
	});
});
