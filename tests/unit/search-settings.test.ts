import { describe, expect, it } from 'vitest';
import {
	ENTRIES_SETTINGS,
	FILTERABLE_ATTRIBUTES,
	SEARCHABLE_ATTRIBUTES,
	SORTABLE_ATTRIBUTES,
	STOP_WORDS,
	SYNONYM_GROUPS,
	popularityOf,
	synonymMap,
	type EntryDocument
} from '../../search/settings';
import { matchesFilter, parseFilter, parseFilterString, FilterError } from '../../search/standin/filter';
import { validateSettingsPatch, ApiError } from '../../search/standin/engine';

// Every attribute the settings name must exist on the document: the engine accepts unknown names
// silently, so a typo here would quietly disable a filter or a sort.
const SAMPLE: Record<keyof EntryDocument, true> = {
	id: true, orgId: true, status: true, authorId: true, componentKind: true, class: true, tags: true, assembly: true, partNumber: true,
	title: true, symptom: true, cause: true, fix: true, body: true, traceClasses: true, createdAt: true, updatedAt: true,
	publishedAt: true, views: true, helpedCount: true, popularity: true
};

describe('entries index settings', () => {
	it('name only attributes an EntryDocument has', () => {
		for (const a of [...SEARCHABLE_ATTRIBUTES, ...FILTERABLE_ATTRIBUTES, ...SORTABLE_ATTRIBUTES]) expect(Object.keys(SAMPLE)).toContain(a);
		for (const rule of ENTRIES_SETTINGS.rankingRules.filter((r) => r.includes(':'))) {
			expect(SORTABLE_ATTRIBUTES as readonly string[]).toContain(rule.split(':')[0]);
		}
	});

	it('make the organisation and status filterable (tenancy depends on it)', () => {
		expect(FILTERABLE_ATTRIBUTES).toEqual(expect.arrayContaining(['orgId', 'status']));
	});

	it('turn each synonym group into mutual synonyms', () => {
		const map = synonymMap();
		for (const group of SYNONYM_GROUPS) {
			for (const word of group) for (const other of group) if (other !== word) expect(map[word]).toContain(other);
		}
		// Trade words from the index definition (common practice, no source).
		expect(map['e-cap']).toContain('electrolytic capacitor');
		expect(map.zener).toContain('z-diode');
		expect(map.shorted).toContain('dead short');
		expect(map.open).toContain('no continuity');
		expect(map.leaky).toContain('leakage');
		expect(map.knee).toContain('forward drop');
	});

	it('never drop a word of the trade as a stop word', () => {
		for (const word of SYNONYM_GROUPS.flat().flatMap((w) => w.split(/[^a-z0-9]+/))) expect(STOP_WORDS).not.toContain(word);
	});

	it('is valid for the stand-in as a whole', () => {
		expect(() => validateSettingsPatch(ENTRIES_SETTINGS)).not.toThrow();
	});

	it('rank "this helped" above views, and grow slowly (common practice, no source)', () => {
		expect(popularityOf(0, 0)).toBe(0);
		expect(popularityOf(0, 1)).toBeGreaterThan(popularityOf(5, 0));
		expect(popularityOf(10_000, 0)).toBeLessThan(10 * popularityOf(10, 0));
	});
});

describe('stand-in filter grammar', () => {
	const doc = { a: 1, b: 'x', tags: ['p', 'q'] };
	it('binds AND tighter than OR, as the engine documents', () => {
		expect(parseFilterString('a = 1 OR b = y AND a = 2')).toMatchObject({ kind: 'or', children: [{ kind: 'cmp' }, { kind: 'and' }] });
		expect(matchesFilter(parseFilter('a = 1 OR b = y AND a = 2'), doc)).toBe(true);
		expect(matchesFilter(parseFilter('(a = 1 OR b = y) AND a = 2'), doc)).toBe(false);
	});

	it('reads quoted values with escapes', () => {
		expect(parseFilterString('b = "say \\"hi\\""')).toEqual({ kind: 'cmp', attr: 'b', op: '=', value: 'say "hi"' });
	});

	it('treats != as the negation of = (documents without the attribute match)', () => {
		expect(matchesFilter(parseFilter('missing != 3'), doc)).toBe(true);
		expect(matchesFilter(parseFilter('tags != p'), doc)).toBe(false);
	});

	it.each(['a =', 'a = 1 AND', 'a IN [1, 2', '(a = 1', 'a = 1)', 'a ~ 1', 'a CONTAINS b', 'b IS EMPTY', '"unclosed'])('refuses %j', (f) => {
		expect(() => parseFilterString(f)).toThrow(FilterError);
	});

	it('refuses a filter array holding something other than strings', () => {
		expect(() => parseFilter([[1]])).toThrow(FilterError);
		expect(() => parseFilter({ a: 1 })).toThrow(FilterError);
	});

	it('refuses a setting it cannot honour rather than ignoring it', () => {
		expect(() => validateSettingsPatch({ distinctAttribute: 'title' })).toThrow(ApiError);
		expect(() => validateSettingsPatch({ rankingRules: ['words', 'nonsense'] })).toThrow(/ranking rule is invalid/);
	});
});
