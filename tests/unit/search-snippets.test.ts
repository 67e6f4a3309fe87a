import { describe, expect, it } from 'vitest';
import { describeIndexLag } from '../../src/lib/format/index-lag';
import { searchParams, searchQuery } from '../../src/lib/schemas/search';
import { cropMarked, SNIPPET_CHARS } from '../../src/lib/server/search/engine';

// The engine module marks matches with these control characters before escaping.
const PRE = '\u0002';
const POST = '\u0003';
const words = (n: number, from = 0) => Array.from({ length: n }, (_, k) => `word${from + k}`).join(' ');

describe('cropMarked', () => {
	it('keeps short text whole, with its whitespace folded', () => {
		expect(cropMarked(`a  ${PRE}leaky${POST}\ncap`)).toBe(`a ${PRE}leaky${POST} cap`);
	});

	it('cuts long text around the first match, at spaces, with ellipses on cut sides', () => {
		const text = `${words(60)} ${PRE}leakage${POST} ${words(60, 100)}`;
		const out = cropMarked(text);
		expect(out.startsWith('…word')).toBe(true);
		expect(out.endsWith('…')).toBe(true);
		expect(out).toContain(`${PRE}leakage${POST}`);
		// Cut between words, never inside one.
		for (const w of out.replace(/…/g, '').split(' ')) expect(w.replace(/[\u0002\u0003]/g, '')).toMatch(/^(word\d+|leakage)$/);
		expect(out.length).toBeLessThanOrEqual(SNIPPET_CHARS + 2);
	});

	it('balances a mark the cut would split', () => {
		const text = `${words(10)} ${PRE}${'x'.repeat(10)} ${words(80)}${POST}`;
		const out = cropMarked(text);
		expect(out.split(PRE).length).toBe(out.split(POST).length);
	});
});

describe('describeIndexLag', () => {
	it('says "up to date" with nothing waiting, and how many and how old otherwise', () => {
		expect(describeIndexLag({ pending: 0, failing: 0, lagSeconds: 0 })).toEqual({ text: 'Search index: up to date', healthy: true });
		expect(describeIndexLag({ pending: 12, failing: 0, lagSeconds: 180 }).text).toBe('Search index: 12 changes waiting, oldest 3 min');
		expect(describeIndexLag({ pending: 1, failing: 0, lagSeconds: 2 })).toEqual({ text: 'Search index: 1 change waiting, oldest 2 s', healthy: true });
	});

	it('says the changes are kept when the search service is not taking them', () => {
		const lag = describeIndexLag({ pending: 3, failing: 3, lagSeconds: 7200 });
		expect(lag.healthy).toBe(false);
		expect(lag.text).toMatch(/3 changes waiting, oldest 2 h\. .*kept and retried/);
	});
});

describe('searchQuery', () => {
	it('reads repeated and comma-separated facet values, trims the query, and defaults the rest', () => {
		expect(searchQuery.parse({ q: '  knee too soft ', kind: ['zener', 'diode,zener'], tags: 'leaky' })).toEqual({
			q: 'knee too soft',
			kind: ['zener', 'diode'],
			tags: ['leaky'],
			sort: 'relevance',
			limit: 20,
			offset: 0
		});
	});

	it('refuses unknown values with a message a person can act on', () => {
		const r = searchQuery.safeParse({ kind: 'flux', sort: 'loudest', limit: '0' });
		expect(r.success).toBe(false);
		const messages = r.error!.issues.map((i) => i.message);
		expect(messages).toEqual(expect.arrayContaining(['Unknown component kind.', 'Sort by relevance or date.', 'The limit must be at least 1.']));
	});

	it('writes back the same query string it reads, leaving defaults out', () => {
		const q = searchQuery.parse({ q: 'leaky cap', kind: ['capacitor'], sort: 'date' });
		expect(searchParams(q).toString()).toBe('q=leaky+cap&kind=capacitor&sort=date');
		expect(searchQuery.parse(Object.fromEntries(searchParams(q)))).toMatchObject({ q: 'leaky cap', sort: 'date' });
	});
});
