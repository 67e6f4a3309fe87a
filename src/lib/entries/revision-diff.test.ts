import { describe, expect, it } from 'vitest';
import { diffRevisions } from './revision-diff';

describe('revision diff', () => {
	it('leaves out unchanged fields and shows Markdown changes line by line', () => {
		const a = { title: 'Gate driver leak', body: 'Line one\nLine two\n', tags: ['gate-drive'] };
		const b = { title: 'Gate driver leak', body: 'Line one\nLine 2\nLine three\n', tags: ['gate-drive', 'leaky'] };
		const d = diffRevisions(a, b);
		expect(d.map((f) => f.key)).toEqual(['body', 'tags']);
		const body = d[0].parts;
		expect(body).toEqual([
			{ kind: 'same', text: 'Line one\n' },
			{ kind: 'removed', text: 'Line two\n' },
			{ kind: 'added', text: 'Line 2\nLine three\n' }
		]);
	});

	it('shows short fields word by word, and reassembles both versions exactly', () => {
		const [title] = diffRevisions({ title: 'Open pin on U12' }, { title: 'Open pin 7 on U12' });
		const before = title.parts.filter((p) => p.kind !== 'added').map((p) => p.text).join('');
		const after = title.parts.filter((p) => p.kind !== 'removed').map((p) => p.text).join('');
		expect(before).toBe('Open pin on U12');
		expect(after).toBe('Open pin 7 on U12');
		expect(title.parts.some((p) => p.kind === 'added' && p.text.includes('7'))).toBe(true);
	});

	it('finds no change between equal revisions', () => {
		expect(diffRevisions({ title: 'x', tags: ['a'] }, { title: 'x', tags: ['a'] })).toEqual([]);
	});
});
