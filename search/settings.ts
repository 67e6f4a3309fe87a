/**
 * The entries index: what a search document holds and how the engine ranks it. The same settings
 * go to the real engine (applied by `ensureIndex()` at start) and to the local stand-in, so both
 * rank by the same attribute order, synonyms and stop words. Plain data, no imports: the app, the
 * stand-in and the scripts all read it.
 */

/** The one index every organisation's entries live in; tenancy is a filter on `orgId`. */
export const ENTRIES_INDEX = 'entries';
export const ENTRIES_PRIMARY_KEY = 'id';

/**
 * One entry as the search engine sees it. Postgres holds the truth; this is a projection rebuilt
 * from it (outbox drain or reindex). Dates are Unix time in milliseconds so they sort and filter as
 * numbers.
 */
export interface EntryDocument {
	/** The entry's id (uuid). Engine ids allow only [A-Za-z0-9_-], which a uuid satisfies. */
	id: string;
	orgId: string;
	status: string;
	/** Who wrote it: contributors find their own drafts, nobody else's. */
	authorId: string | null;
	/** e.g. capacitor, diode, zener, resistor, ic-pin */
	componentKind: string | null;
	/** The curve class of the entry's fault trace (open, short, resistive, …). */
	class: string | null;
	tags: string[];
	assembly: string | null;
	partNumber: string | null;
	title: string;
	symptom: string;
	cause: string;
	fix: string;
	/** The Markdown body as plain text (markup stripped). */
	body: string;
	/** Curve classes of every trace attached to the entry. */
	traceClasses: string[];
	createdAt: number;
	updatedAt: number;
	publishedAt: number | null;
	views: number;
	helpedCount: number;
	/** A single ranking signal derived from views and "this helped" marks (see `popularityOf`). */
	popularity: number;
}

/**
 * "This helped" is a deliberate act, so it counts more than a view; the logarithm keeps one much
 * viewed entry from drowning fresh ones. Common practice, no source.
 */
export function popularityOf(views: number, helpedCount: number): number {
	return Math.round(100 * Math.log10(1 + Math.max(0, views) + 10 * Math.max(0, helpedCount))) / 100;
}

/**
 * Attributes searched, most important first: the engine ranks a match in an earlier attribute
 * above one in a later attribute. A junior types what they see, so the title and the symptom come
 * before cause and fix; part numbers are typed exactly and rarely collide with prose.
 */
export const SEARCHABLE_ATTRIBUTES = [
	'title',
	'symptom',
	'partNumber',
	'tags',
	'componentKind',
	'cause',
	'fix',
	'assembly',
	'body'
] as const;

export const FILTERABLE_ATTRIBUTES = [
	'orgId',
	'status',
	'authorId',
	'componentKind',
	'class',
	'tags',
	'assembly',
	'traceClasses',
	'partNumber',
	'createdAt',
	'updatedAt',
	'publishedAt',
	'popularity'
] as const;

export const SORTABLE_ATTRIBUTES = ['updatedAt', 'publishedAt', 'createdAt', 'popularity'] as const;

/**
 * "sort" sits right after "words" so that choosing "newest first" on the search screen really
 * orders by date among the entries that match every word; popularity breaks the remaining ties.
 */
export const RANKING_RULES = [
	'words',
	'sort',
	'typo',
	'proximity',
	'attribute',
	'exactness',
	'popularity:desc'
] as const;

/**
 * Typo tolerance: one typo from 5 letters, two from 9 (the engine's defaults, kept explicit so the
 * stand-in follows the same thresholds). Part numbers are exact: "1N4148" and "1N4448" are different
 * parts and a typo must not turn one into the other.
 */
export const TYPO_TOLERANCE = {
	enabled: true,
	minWordSizeForTypos: { oneTypo: 5, twoTypos: 9 },
	disableOnAttributes: ['partNumber'],
	disableOnWords: [] as string[]
};

/** Words that carry no meaning in a symptom description. */
export const STOP_WORDS = [
	'a',
	'an',
	'and',
	'are',
	'as',
	'at',
	'be',
	'but',
	'by',
	'for',
	'from',
	'has',
	'have',
	'in',
	'into',
	'is',
	'it',
	'its',
	'of',
	'on',
	'or',
	'so',
	'that',
	'the',
	'then',
	'there',
	'this',
	'to',
	'was',
	'were',
	'when',
	'with'
];

/**
 * Groups of words technicians use for the same thing. Each group becomes mutual synonyms: typing
 * any one finds entries that use any other. Words of the trade, common practice, no source.
 */
export const SYNONYM_GROUPS: readonly (readonly string[])[] = [
	['cap', 'capacitor', 'condenser'],
	['e-cap', 'ecap', 'electrolytic', 'electrolytic capacitor', 'elko'],
	['mlcc', 'ceramic capacitor', 'ceramic cap'],
	['zener', 'z-diode', 'zener diode'],
	['short', 'shorted', 'dead short', 'short circuit'],
	['open', 'no continuity', 'open circuit', 'opened'],
	['leaky', 'leakage', 'leaking'],
	['knee', 'forward drop', 'forward voltage', 'vf'],
	['esr', 'equivalent series resistance'],
	['res', 'resistor'],
	['diode', 'junction', 'pn junction', 'rectifier'],
	['transistor', 'bjt'],
	['mosfet', 'fet'],
	['ic', 'chip', 'integrated circuit'],
	['inductor', 'choke', 'coil'],
	['gnd', 'ground'],
	['vcc', 'supply rail', 'power rail'],
	['breakdown', 'avalanche'],
	['cracked', 'crack', 'fractured'],
	['solder joint', 'dry joint', 'cold joint']
];

/**
 * The engine's synonym map: each word or phrase lists the others of its group. (The engine also
 * accepts one-way synonyms; we only use mutual ones.)
 */
export function synonymMap(groups: readonly (readonly string[])[] = SYNONYM_GROUPS): Record<string, string[]> {
	const map: Record<string, string[]> = {};
	for (const group of groups) {
		for (const word of group) {
			const others = group.filter((w) => w !== word);
			map[word] = [...new Set([...(map[word] ?? []), ...others])];
		}
	}
	return map;
}

/** Everything `PATCH /indexes/entries/settings` receives. */
export const ENTRIES_SETTINGS = {
	searchableAttributes: [...SEARCHABLE_ATTRIBUTES],
	filterableAttributes: [...FILTERABLE_ATTRIBUTES],
	sortableAttributes: [...SORTABLE_ATTRIBUTES],
	rankingRules: [...RANKING_RULES],
	typoTolerance: TYPO_TOLERANCE,
	stopWords: STOP_WORDS,
	synonyms: synonymMap(),
	faceting: { maxValuesPerFacet: 100 },
	pagination: { maxTotalHits: 1000 }
};

export type EntriesSettings = typeof ENTRIES_SETTINGS;
