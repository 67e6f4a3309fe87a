/**
 * The stand-in's in-memory engine: indexes, settings, documents, tasks and search, with full-text
 * matching by MiniSearch. Framework-free and synchronous apart from the task queue; the HTTP layer
 * (server.ts) maps requests onto it. What it supports and refuses is listed in search/README.md.
 */
import MiniSearch, { type Query, type SearchResult } from 'minisearch';
import { FilterError, filterAttributes, matchesFilter, normaliseFilterValue, parseFilter, type FilterNode } from './filter';

export const ERROR_LINK = 'https://docs.meilisearch.com/errors#';

/** An error the HTTP layer returns as `{message, code, type, link}` with this status. */
export class ApiError extends Error {
	constructor(
		readonly status: number,
		readonly code: string,
		message: string,
		readonly type: 'invalid_request' | 'internal' | 'auth' | 'system' = 'invalid_request'
	) {
		super(message);
		this.name = 'ApiError';
	}
	toJSON() {
		return { message: this.message, code: this.code, type: this.type, link: ERROR_LINK + this.code };
	}
}

type Doc = Record<string, unknown>;

export interface TypoTolerance {
	enabled: boolean;
	minWordSizeForTypos: { oneTypo: number; twoTypos: number };
	disableOnWords: string[];
	disableOnAttributes: string[];
	disableOnNumbers?: boolean;
}

export interface Settings {
	displayedAttributes: string[];
	searchableAttributes: string[];
	filterableAttributes: string[];
	sortableAttributes: string[];
	rankingRules: string[];
	stopWords: string[];
	synonyms: Record<string, string[]>;
	typoTolerance: TypoTolerance;
	faceting: { maxValuesPerFacet: number; sortFacetValuesBy: Record<string, 'alpha' | 'count'> };
	pagination: { maxTotalHits: number };
	distinctAttribute: string | null;
}

export function defaultSettings(): Settings {
	return {
		displayedAttributes: ['*'],
		searchableAttributes: ['*'],
		filterableAttributes: [],
		sortableAttributes: [],
		rankingRules: ['words', 'typo', 'proximity', 'attribute', 'sort', 'exactness'],
		stopWords: [],
		synonyms: {},
		typoTolerance: {
			enabled: true,
			minWordSizeForTypos: { oneTypo: 5, twoTypos: 9 },
			disableOnWords: [],
			disableOnAttributes: [],
			disableOnNumbers: false
		},
		faceting: { maxValuesPerFacet: 100, sortFacetValuesBy: { '*': 'alpha' } },
		pagination: { maxTotalHits: 1000 },
		distinctAttribute: null
	};
}

/** Settings names in requests (camelCase in PATCH bodies, kebab-case in single-setting paths). */
export const SETTING_NAMES = Object.keys(defaultSettings()) as (keyof Settings)[];
export const kebabToSetting = (name: string): keyof Settings | undefined =>
	SETTING_NAMES.find((s) => s.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`) === name);

// Settings the real engine has that the stand-in cannot honour; refused rather than accepted and ignored.
const UNSUPPORTED_SETTINGS = new Set([
	'proximityPrecision',
	'separatorTokens',
	'nonSeparatorTokens',
	'dictionary',
	'embedders',
	'searchCutoffMs',
	'localizedAttributes',
	'facetSearch',
	'prefixSearch',
	'foreignKeys',
	'chat',
	'vectorStore'
]);

const isStringArray = (v: unknown): v is string[] => Array.isArray(v) && v.every((s) => typeof s === 'string');

function invalidSetting(name: string, message: string): ApiError {
	const code = `invalid_settings_${name.replace(/[A-Z]/g, (c) => `_${c.toLowerCase()}`)}`;
	return new ApiError(400, code, `Invalid value at \`.${name}\`: ${message}`);
}

/** Validates a settings patch synchronously (as the engine does) and returns it typed. */
export function validateSettingsPatch(patch: unknown): Partial<Settings> {
	if (patch === null || typeof patch !== 'object' || Array.isArray(patch)) {
		throw new ApiError(400, 'bad_request', 'Invalid value type: expected an object of settings.');
	}
	const out: Partial<Settings> = {};
	const defaults = defaultSettings();
	for (const [key, value] of Object.entries(patch as Record<string, unknown>)) {
		if (UNSUPPORTED_SETTINGS.has(key)) {
			throw new ApiError(400, 'feature_not_supported', `The setting \`${key}\` is not supported by the local search stand-in (see search/README.md).`);
		}
		if (!(SETTING_NAMES as string[]).includes(key)) {
			throw new ApiError(400, 'bad_request', `Unknown field \`${key}\`: expected one of ${SETTING_NAMES.map((s) => `\`${s}\``).join(', ')}.`);
		}
		const name = key as keyof Settings;
		// null resets a setting to its default, as in the engine.
		if (value === null) {
			(out as Record<string, unknown>)[name] = defaults[name];
			continue;
		}
		switch (name) {
			case 'displayedAttributes':
			case 'searchableAttributes':
			case 'filterableAttributes':
			case 'sortableAttributes':
			case 'stopWords':
				if (!isStringArray(value)) throw invalidSetting(name, 'expected an array of strings (attribute objects are not supported by the stand-in).');
				out[name] = [...value];
				break;
			case 'rankingRules':
				if (!isStringArray(value)) throw invalidSetting(name, 'expected an array of strings.');
				for (const rule of value) {
					if (!['words', 'typo', 'proximity', 'attribute', 'sort', 'exactness'].includes(rule) && !/^[^:\s]+:(asc|desc)$/.test(rule)) {
						throw invalidSetting(name, `\`${rule}\` ranking rule is invalid. Valid ranking rules are words, typo, sort, proximity, attribute, exactness and custom ranking rules.`);
					}
				}
				out.rankingRules = [...value];
				break;
			case 'synonyms':
				if (typeof value !== 'object' || Array.isArray(value) || !Object.values(value as object).every(isStringArray)) {
					throw invalidSetting(name, 'expected an object of arrays of strings.');
				}
				out.synonyms = { ...(value as Record<string, string[]>) };
				break;
			case 'typoTolerance': {
				const v = value as Partial<TypoTolerance>;
				if (typeof v !== 'object' || Array.isArray(v)) throw invalidSetting(name, 'expected an object.');
				const words = { ...defaults.typoTolerance.minWordSizeForTypos, ...(v.minWordSizeForTypos ?? {}) };
				if (!(words.oneTypo <= words.twoTypos)) throw invalidSetting(name, '`oneTypo` must be less than or equal to `twoTypos`.');
				out.typoTolerance = { ...defaults.typoTolerance, ...v, minWordSizeForTypos: words };
				break;
			}
			case 'faceting': {
				const v = value as Partial<Settings['faceting']>;
				out.faceting = { ...defaults.faceting, ...v };
				break;
			}
			case 'pagination': {
				const v = value as Partial<Settings['pagination']>;
				out.pagination = { ...defaults.pagination, ...v };
				break;
			}
			case 'distinctAttribute':
				throw new ApiError(400, 'feature_not_supported', 'The setting `distinctAttribute` is not supported by the local search stand-in (see search/README.md).');
		}
	}
	return out;
}

// ---------------------------------------------------------------- text processing

/** Lower case, accents removed: "Électrolytique" and "electrolytique" are one word. */
export const normalise = (s: string): string =>
	// Most text is ASCII: skip the Unicode decomposition for it (indexing calls this for every word).
	/^[\x00-\x7f]*$/.test(s) ? s.toLowerCase() : s.normalize('NFKD').replace(/\p{M}/gu, '').toLowerCase();

/** Words are runs of letters and digits; everything else separates ("e-cap" is "e" + "cap"). */
export const splitWords = (s: string): string[] => s.split(/[^\p{L}\p{N}]+/u).filter(Boolean);

function fieldText(value: unknown): string {
	if (value === null || value === undefined) return '';
	if (Array.isArray(value)) return value.map(fieldText).join(' \u0000 ');
	if (typeof value === 'object') return Object.values(value as object).map(fieldText).join(' ');
	return String(value);
}

// ---------------------------------------------------------------- tasks

export type TaskStatus = 'enqueued' | 'processing' | 'succeeded' | 'failed';

export interface Task {
	uid: number;
	batchUid: number | null;
	indexUid: string | null;
	status: TaskStatus;
	type: string;
	canceledBy: null;
	details: Record<string, unknown>;
	error: ReturnType<ApiError['toJSON']> | null;
	duration: string | null;
	enqueuedAt: string;
	startedAt: string | null;
	finishedAt: string | null;
}

// ---------------------------------------------------------------- one index

const DOCUMENT_ID = /^[A-Za-z0-9_-]{1,511}$/;
const NO_TERMS: ReadonlySet<string> = new Set();

interface Hit {
	id: string;
	doc: Doc;
	seq: number;
	words: number;
	score: number;
	terms: ReadonlySet<string>;
}

export interface SearchRequest {
	q?: string | null;
	filter?: unknown;
	facets?: string[];
	attributesToHighlight?: string[];
	highlightPreTag?: string;
	highlightPostTag?: string;
	sort?: string[];
	limit?: number;
	offset?: number;
	attributesToRetrieve?: string[];
	matchingStrategy?: 'last' | 'all';
}

const SEARCH_FIELDS = new Set([
	'q',
	'filter',
	'facets',
	'attributesToHighlight',
	'highlightPreTag',
	'highlightPostTag',
	'sort',
	'limit',
	'offset',
	'attributesToRetrieve',
	'matchingStrategy'
]);
const KNOWN_UNSUPPORTED_SEARCH_FIELDS = new Set([
	'attributesToCrop',
	'cropLength',
	'cropMarker',
	'showMatchesPosition',
	'showRankingScore',
	'showRankingScoreDetails',
	'rankingScoreThreshold',
	'hitsPerPage',
	'page',
	'vector',
	'hybrid',
	'distinct',
	'attributesToSearchOn',
	'locales',
	'retrieveVectors',
	'media',
	'personalize'
]);

export class StandinIndex {
	settings: Settings = defaultSettings();
	readonly docs = new Map<string, { seq: number; doc: Doc }>();
	private seq = 0;
	private mini: MiniSearch<Doc> | null = null;
	private miniFields: string[] = [];
	readonly createdAt = new Date().toISOString();
	updatedAt = this.createdAt;

	constructor(
		readonly uid: string,
		public primaryKey: string | null
	) {}

	private searchableFields(): string[] {
		if (!this.settings.searchableAttributes.includes('*')) return this.settings.searchableAttributes;
		const fields = new Set<string>();
		for (const { doc } of this.docs.values()) for (const k of Object.keys(doc)) fields.add(k);
		return [...fields];
	}

	/** The full-text index is rebuilt lazily after settings change or new fields appear. */
	private index(): MiniSearch<Doc> {
		const fields = this.searchableFields();
		if (this.mini && fields.length === this.miniFields.length && fields.every((f, i) => f === this.miniFields[i])) return this.mini;
		const stop = new Set(this.settings.stopWords.map(normalise));
		const mini = new MiniSearch<Doc>({
			fields,
			idField: '__id',
			extractField: (doc, field) => (field === '__id' ? (doc.__id as string) : fieldText(doc[field])),
			tokenize: splitWords,
			processTerm: (term) => {
				const t = normalise(term);
				return t && !stop.has(t) ? t : null;
			}
		});
		for (const [id, { doc }] of this.docs) mini.add({ ...doc, __id: id });
		this.mini = mini;
		this.miniFields = fields;
		return mini;
	}

	invalidate(): void {
		this.mini = null;
	}

	applySettings(patch: Partial<Settings>): void {
		this.settings = { ...this.settings, ...patch };
		this.invalidate();
		this.touch();
	}

	private touch(): void {
		this.updatedAt = new Date().toISOString();
	}

	/** Adds or replaces (POST) or merges (PUT) documents; all or nothing, as one engine task. */
	putDocuments(documents: Doc[], merge: boolean, primaryKeyParam: string | null): { receivedDocuments: number; indexedDocuments: number } {
		if (primaryKeyParam && this.primaryKey && primaryKeyParam !== this.primaryKey) {
			throw new ApiError(400, 'index_primary_key_already_exists', `Index \`${this.uid}\`: Index already has a primary key: \`${this.primaryKey}\`.`);
		}
		let key = this.primaryKey ?? primaryKeyParam;
		if (!key) {
			const candidates = documents.length ? Object.keys(documents[0]).filter((k) => /id$/i.test(k)) : [];
			if (candidates.length !== 1) {
				throw new ApiError(400, 'index_primary_key_no_candidate_found', `Index \`${this.uid}\`: The primary key inference failed as the engine did not find any field ending with \`id\` in its name. Please specify the primary key manually using the \`primaryKey\` query parameter.`);
			}
			key = candidates[0];
		}
		const staged: [string, Doc][] = [];
		for (const doc of documents) {
			const raw = doc[key];
			if (raw === undefined || raw === null) {
				throw new ApiError(400, 'missing_document_id', `Document doesn't have a \`${key}\` attribute: \`${JSON.stringify(doc)}\`.`);
			}
			const id = typeof raw === 'number' && Number.isInteger(raw) ? String(raw) : typeof raw === 'string' ? raw : null;
			if (id === null || !DOCUMENT_ID.test(id)) {
				throw new ApiError(400, 'invalid_document_id', `Document identifier \`${JSON.stringify(raw)}\` is invalid. A document identifier can be of type integer or string, only composed of alphanumeric characters (a-z A-Z 0-9), hyphens (-) and underscores (_), and can not be more than 511 bytes.`);
			}
			staged.push([id, doc]);
		}
		this.primaryKey = key;
		// Keep the full-text index current on every write, so no search pays for building it.
		const mini = this.mini ?? this.index();
		for (const [id, doc] of staged) {
			const existing = this.docs.get(id);
			const next = merge && existing ? { ...existing.doc, ...doc } : { ...doc };
			this.docs.set(id, { seq: existing?.seq ?? this.seq++, doc: next });
			if (mini) {
				const newFields = this.settings.searchableAttributes.includes('*') && Object.keys(next).some((k) => !this.miniFields.includes(k));
				if (newFields) this.invalidate();
				else if (mini.has(id)) mini.replace({ ...next, __id: id });
				else mini.add({ ...next, __id: id });
			}
		}
		this.touch();
		return { receivedDocuments: documents.length, indexedDocuments: staged.length };
	}

	deleteIds(ids: string[]): number {
		let deleted = 0;
		for (const id of ids) {
			if (!this.docs.delete(id)) continue;
			deleted++;
			if (this.mini?.has(id)) this.mini.discard(id);
		}
		this.touch();
		return deleted;
	}

	deleteAll(): number {
		const n = this.docs.size;
		this.docs.clear();
		this.invalidate();
		this.touch();
		return n;
	}

	checkFilterable(node: FilterNode, code: string): void {
		for (const attr of filterAttributes(node)) {
			if (!this.settings.filterableAttributes.includes(attr)) {
				const available = this.settings.filterableAttributes.length ? this.settings.filterableAttributes.join(', ') : '(none)';
				throw new ApiError(400, code, `Index \`${this.uid}\`: Attribute \`${attr}\` is not filterable. Available filterable attributes are: \`${available}\`.`);
			}
		}
	}

	deleteByFilter(node: FilterNode): number {
		this.checkFilterable(node, 'invalid_document_filter');
		const ids = [...this.docs].filter(([, { doc }]) => matchesFilter(node, doc)).map(([id]) => id);
		return this.deleteIds(ids);
	}

	getDocument(id: string, fields?: string[]): Doc {
		const entry = this.docs.get(id);
		if (!entry) throw new ApiError(404, 'document_not_found', `Document \`${id}\` not found.`);
		return this.project(entry.doc, fields);
	}

	listDocuments(offset: number, limit: number, fields?: string[]): { results: Doc[]; offset: number; limit: number; total: number } {
		const all = [...this.docs.values()].sort((a, b) => a.seq - b.seq);
		return { results: all.slice(offset, offset + limit).map((e) => this.project(e.doc, fields)), offset, limit, total: all.length };
	}

	private project(doc: Doc, fields?: string[]): Doc {
		const displayed = this.settings.displayedAttributes;
		const allowed = (k: string) => (displayed.includes('*') || displayed.includes(k)) && (!fields || fields.includes('*') || fields.includes(k));
		return Object.fromEntries(Object.entries(doc).filter(([k]) => allowed(k)));
	}

	// ------------------------------------------------------------ search

	/**
	 * Query words → groups of alternatives. A synonym key may span several words ("dead short");
	 * the longest key starting at a word wins. Each group matches when any alternative (a phrase:
	 * all its words) matches.
	 */
	private queryGroups(q: string): { alternatives: string[][]; original: string[] }[] {
		const stop = new Set(this.settings.stopWords.map(normalise));
		const words = splitWords(q).map(normalise).filter((w) => !stop.has(w));
		const synonyms = new Map<string, string[][]>();
		let longestKey = 1;
		for (const [key, values] of Object.entries(this.settings.synonyms)) {
			const k = splitWords(key).map(normalise).filter((w) => !stop.has(w)).join(' ');
			if (!k) continue;
			longestKey = Math.max(longestKey, k.split(' ').length);
			const alts = synonyms.get(k) ?? [];
			for (const v of values) {
				const phrase = splitWords(v).map(normalise).filter((w) => !stop.has(w));
				if (phrase.length) alts.push(phrase);
			}
			synonyms.set(k, alts);
		}
		const groups: { alternatives: string[][]; original: string[] }[] = [];
		for (let i = 0; i < words.length; ) {
			let matched = 0;
			for (let n = Math.min(longestKey, words.length - i); n >= 1; n--) {
				if (synonyms.has(words.slice(i, i + n).join(' '))) {
					matched = n;
					break;
				}
			}
			const n = matched || 1;
			const original = words.slice(i, i + n);
			const alternatives = [original, ...(matched ? synonyms.get(original.join(' '))! : [])];
			groups.push({ alternatives, original });
			i += n;
		}
		return groups;
	}

	private typoBudget(word: string): number {
		const t = this.settings.typoTolerance;
		if (!t.enabled || t.disableOnWords.map(normalise).includes(word)) return 0;
		if (t.disableOnNumbers && /^\p{N}+$/u.test(word)) return 0;
		if (word.length >= t.minWordSizeForTypos.twoTypos) return 2;
		if (word.length >= t.minWordSizeForTypos.oneTypo) return 1;
		return 0;
	}

	private termQuery(word: string, prefix: boolean, typos: boolean, fields: string[]): Query {
		const budget = typos ? this.typoBudget(word) : 0;
		const exact: Query = { queries: [word], prefix, fuzzy: false, fields };
		if (!budget) return exact;
		const tolerant = fields.filter((f) => !this.settings.typoTolerance.disableOnAttributes.includes(f));
		if (!tolerant.length) return exact;
		return { combineWith: 'OR', queries: [exact, { queries: [word], prefix, fuzzy: budget, fields: tolerant }] };
	}

	/**
	 * Documents matching the text, restricted to those `keep` accepts (the request's filter). The
	 * filter is applied as results arrive, once per document, so the documents it rejects (another
	 * organisation's, say) cost no bookkeeping; the outcome is the same as filtering afterwards.
	 */
	private matchText(q: string, prefixLast: boolean, keep: (doc: Doc) => boolean = () => true): Map<string, Hit> {
		const mini = this.index();
		const fields = this.miniFields;
		const n = fields.length;
		// Earlier searchable attributes weigh more: the stand-in's form of the "attribute" rule.
		const boost = Object.fromEntries(fields.map((f, i) => [f, 1 + 2 * (n - 1 - i) / Math.max(1, n - 1)]));
		const groups = this.queryGroups(q);
		const hits = new Map<string, Hit>();
		const rejected = new Set<string>();
		groups.forEach((group, gi) => {
			const last = gi === groups.length - 1;
			const query: Query = {
				combineWith: 'OR',
				queries: group.alternatives.map((phrase, ai) => ({
					combineWith: 'AND',
					queries: phrase.map((word, wi) =>
						// Typos and prefixes apply to what was typed, not to the synonyms it expands to.
						this.termQuery(word, ai === 0 && last && prefixLast && wi === phrase.length - 1, ai === 0, fields)
					)
				}))
			};
			const results: SearchResult[] = mini.search(query, { boost, fields });
			for (const r of results) {
				const id = r.id as string;
				if (rejected.has(id)) continue;
				const stored = this.docs.get(id);
				if (!stored) continue;
				if (!hits.has(id) && !keep(stored.doc)) {
					rejected.add(id);
					continue;
				}
				const hit = hits.get(id) ?? { id, doc: stored.doc, seq: stored.seq, words: 0, score: 0, terms: new Set<string>() };
				hit.words++;
				hit.score += r.score;
				for (const t of r.terms) (hit.terms as Set<string>).add(t);
				hits.set(id, hit);
			}
		});
		return hits;
	}

	/**
	 * What highlighting needs besides the matched words: the words searched for whole (typed words
	 * and their synonyms) and the word searched as a prefix. A word found only by prefix gets just
	 * that prefix marked, as the engine does ("<em>capac</em>itor").
	 */
	private highlightPlan(q: string, prefixLast: boolean): HighlightPlan {
		const groups = this.queryGroups(q);
		const whole = new Set(groups.flatMap((g) => g.alternatives.flat()));
		const lastGroup = groups[groups.length - 1];
		const prefix = prefixLast && lastGroup ? lastGroup.original[lastGroup.original.length - 1] : undefined;
		return { whole, prefix };
	}

	search(body: unknown): Record<string, unknown> {
		const started = performance.now();
		if (body === null || typeof body !== 'object' || Array.isArray(body)) {
			throw new ApiError(400, 'bad_request', 'Invalid value type: expected an object.');
		}
		for (const key of Object.keys(body)) {
			if (KNOWN_UNSUPPORTED_SEARCH_FIELDS.has(key)) {
				throw new ApiError(400, 'feature_not_supported', `The search parameter \`${key}\` is not supported by the local search stand-in (see search/README.md).`);
			}
			if (!SEARCH_FIELDS.has(key)) throw new ApiError(400, 'bad_request', `Unknown field \`${key}\` in the search request.`);
		}
		const req = body as SearchRequest;
		const q = typeof req.q === 'string' ? req.q : '';
		const limit = req.limit ?? 20;
		const offset = req.offset ?? 0;
		if (!Number.isInteger(limit) || limit < 0) throw new ApiError(400, 'invalid_search_limit', 'Invalid value at `.limit`: expected a positive integer.');
		if (!Number.isInteger(offset) || offset < 0) throw new ApiError(400, 'invalid_search_offset', 'Invalid value at `.offset`: expected a positive integer.');
		const strategy = req.matchingStrategy ?? 'last';
		if (strategy !== 'last' && strategy !== 'all') {
			throw new ApiError(400, 'invalid_search_matching_strategy', `The matching strategy \`${String(strategy)}\` is not supported by the local search stand-in: use \`last\` or \`all\`.`);
		}

		let filter: FilterNode;
		try {
			filter = parseFilter(req.filter);
		} catch (e) {
			if (e instanceof FilterError) throw new ApiError(400, 'invalid_search_filter', e.message);
			throw e;
		}
		this.checkFilterable(filter, 'invalid_search_filter');

		const facets = req.facets ?? [];
		if (!isStringArray(facets)) throw new ApiError(400, 'invalid_search_facets', 'Invalid value at `.facets`: expected an array of strings.');
		for (const f of facets) {
			if (f !== '*' && !this.settings.filterableAttributes.includes(f)) {
				throw new ApiError(400, 'invalid_search_facets', `Invalid facet distribution: Attribute \`${f}\` is not filterable. Available filterable attributes are: \`${this.settings.filterableAttributes.join(', ')}\`.`);
			}
		}
		const sort = this.parseSort(req.sort);

		const placeholder = splitWords(q).length === 0;
		const marks = placeholder ? undefined : this.highlightPlan(q, !/\s$/.test(q));
		let hits: Hit[];
		if (placeholder) {
			hits = [];
			for (const [id, { seq, doc }] of this.docs) if (matchesFilter(filter, doc)) hits.push({ id, doc, seq, words: 0, score: 0, terms: NO_TERMS });
		} else {
			const matched = this.matchText(q, !/\s$/.test(q), (doc) => matchesFilter(filter, doc));
			const groups = this.queryGroups(q).length;
			hits = [...matched.values()];
			if (strategy === 'all') hits = hits.filter((h) => h.words === groups);
		}

		const facetNames = facets.includes('*') ? this.settings.filterableAttributes : facets;
		const facetDistribution = facetNames.length ? this.facetDistribution(hits, facetNames) : undefined;
		const facetStats = facetNames.length ? this.facetStats(hits, facetNames) : undefined;

		hits.sort(this.comparator(sort));
		const max = this.settings.pagination.maxTotalHits;
		const total = Math.min(hits.length, max);
		const page = hits.slice(Math.min(offset, max), Math.min(offset + limit, max));

		const retrieve = req.attributesToRetrieve;
		const highlight = req.attributesToHighlight;
		const pre = req.highlightPreTag ?? '<em>';
		const post = req.highlightPostTag ?? '</em>';
		const result: Record<string, unknown> = {
			hits: page.map((h) => {
				const shown = this.project(h.doc, retrieve);
				if (!highlight?.length) return shown;
				const formatted: Doc = {};
				for (const [k, v] of Object.entries(shown)) {
					const on = highlight.includes('*') || highlight.includes(k);
					formatted[k] = on && marks ? highlightValue(v, h.terms, marks, pre, post) : v;
				}
				return { ...shown, _formatted: formatted };
			}),
			query: q,
			processingTimeMs: Math.round(performance.now() - started),
			limit,
			offset,
			estimatedTotalHits: total
		};
		if (facetDistribution) result.facetDistribution = facetDistribution;
		if (facetStats) result.facetStats = facetStats;
		return result;
	}

	private parseSort(sort: unknown): { attr: string; desc: boolean }[] {
		if (sort === undefined || sort === null) return [];
		if (!isStringArray(sort)) throw new ApiError(400, 'invalid_search_sort', 'Invalid value at `.sort`: expected an array of strings.');
		return sort.map((s) => {
			const m = /^([^:\s]+):(asc|desc)$/.exec(s.trim());
			if (!m) throw new ApiError(400, 'invalid_search_sort', `Invalid syntax for the sort parameter: expected expression ending by \`:asc\` or \`:desc\`, found \`${s}\`.`);
			if (m[1].startsWith('_geo')) throw new ApiError(400, 'invalid_search_sort', `Sorting by \`${m[1]}\` is not supported by the local search stand-in.`);
			if (!this.settings.sortableAttributes.includes(m[1])) {
				throw new ApiError(400, 'invalid_search_sort', `Attribute \`${m[1]}\` is not sortable. Available sortable attributes are: \`${this.settings.sortableAttributes.join(', ')}\`.`);
			}
			return { attr: m[1], desc: m[2] === 'desc' };
		});
	}

	/** Orders hits by the index's ranking rules; typo/proximity/attribute/exactness share one relevance score. */
	private comparator(sort: { attr: string; desc: boolean }[]): (a: Hit, b: Hit) => number {
		const steps: ((a: Hit, b: Hit) => number)[] = [];
		let relevanceAdded = false;
		const byField = (attr: string, desc: boolean) => (a: Hit, b: Hit) =>
			compareValues(a.doc[attr], b.doc[attr], desc);
		for (const rule of this.settings.rankingRules) {
			if (rule === 'words') steps.push((a, b) => b.words - a.words);
			else if (rule === 'sort') for (const s of sort) steps.push(byField(s.attr, s.desc));
			else if (['typo', 'proximity', 'attribute', 'exactness'].includes(rule)) {
				if (!relevanceAdded) steps.push((a, b) => b.score - a.score);
				relevanceAdded = true;
			} else {
				const [attr, dir] = rule.split(':');
				steps.push(byField(attr, dir === 'desc'));
			}
		}
		// Without a "sort" rule the engine refuses sort; the stand-in appends it rather than guess.
		if (!this.settings.rankingRules.includes('sort')) for (const s of sort) steps.push(byField(s.attr, s.desc));
		steps.push((a, b) => a.seq - b.seq);
		return (a, b) => {
			for (const step of steps) {
				const d = step(a, b);
				if (d !== 0) return d;
			}
			return 0;
		};
	}

	private facetDistribution(hits: Hit[], names: string[]): Record<string, Record<string, number>> {
		const out: Record<string, Record<string, number>> = {};
		for (const name of names) {
			const counts = new Map<string, { label: string; count: number }>();
			for (const h of hits) {
				const raw = h.doc[name];
				const values = raw === undefined || raw === null ? [] : Array.isArray(raw) ? raw : [raw];
				const seen = new Set<string>();
				for (const v of values) {
					if (v === null || typeof v === 'object') continue;
					const label = String(v);
					const key = normaliseFilterValue(label);
					if (seen.has(key)) continue;
					seen.add(key);
					const c = counts.get(key) ?? { label, count: 0 };
					c.count++;
					counts.set(key, c);
				}
			}
			const order = this.settings.faceting.sortFacetValuesBy[name] ?? this.settings.faceting.sortFacetValuesBy['*'] ?? 'alpha';
			const sorted = [...counts.values()].sort((a, b) =>
				order === 'count' ? b.count - a.count || a.label.localeCompare(b.label) : a.label < b.label ? -1 : a.label > b.label ? 1 : 0
			);
			out[name] = Object.fromEntries(sorted.slice(0, this.settings.faceting.maxValuesPerFacet).map((c) => [c.label, c.count]));
		}
		return out;
	}

	private facetStats(hits: Hit[], names: string[]): Record<string, { min: number; max: number }> {
		const out: Record<string, { min: number; max: number }> = {};
		for (const name of names) {
			let min = Infinity;
			let max = -Infinity;
			for (const h of hits) {
				const raw = h.doc[name];
				for (const v of Array.isArray(raw) ? raw : [raw]) {
					if (typeof v !== 'number') continue;
					min = Math.min(min, v);
					max = Math.max(max, v);
				}
			}
			if (min <= max) out[name] = { min, max };
		}
		return out;
	}
}

/** Sort order of the engine: numbers before strings, missing values last whatever the direction. */
function compareValues(a: unknown, b: unknown, desc: boolean): number {
	const rank = (v: unknown) => (typeof v === 'number' ? 0 : typeof v === 'string' ? 1 : 2);
	const ra = rank(a);
	const rb = rank(b);
	if (ra !== rb) return ra - rb;
	if (ra === 2) return 0;
	const d = ra === 0 ? (a as number) - (b as number) : (a as string) < (b as string) ? -1 : (a as string) > (b as string) ? 1 : 0;
	return desc ? -d : d;
}

interface HighlightPlan {
	whole: ReadonlySet<string>;
	prefix: string | undefined;
}

function highlightWord(word: string, terms: ReadonlySet<string>, plan: HighlightPlan, pre: string, post: string): string {
	const n = normalise(word);
	if (!terms.has(n)) return word;
	const { prefix } = plan;
	// Found through the prefix only, and the normalised form lines up with the original letters.
	if (prefix && n !== prefix && n.startsWith(prefix) && !plan.whole.has(n) && n.length === word.length) {
		return `${pre}${word.slice(0, prefix.length)}${post}${word.slice(prefix.length)}`;
	}
	return `${pre}${word}${post}`;
}

/** Wraps every word of `value` that matched (exactly, with a typo, or by prefix) in the tags. */
function highlightValue(value: unknown, terms: ReadonlySet<string>, plan: HighlightPlan, pre: string, post: string): unknown {
	if (typeof value === 'string') {
		if (!terms.size) return value;
		return value.replace(/[\p{L}\p{N}]+/gu, (word) => highlightWord(word, terms, plan, pre, post));
	}
	if (Array.isArray(value)) return value.map((v) => highlightValue(v, terms, plan, pre, post));
	return value;
}

// ---------------------------------------------------------------- the whole engine

export class StandinEngine {
	readonly indexes = new Map<string, StandinIndex>();
	private readonly tasks = new Map<number, Task>();
	private nextTaskUid = 0;
	private queue: Promise<void> = Promise.resolve();
	private static readonly TASKS_KEPT = 10_000;

	index(uid: string): StandinIndex {
		const index = this.indexes.get(uid);
		if (!index) throw new ApiError(404, 'index_not_found', `Index \`${uid}\` not found.`);
		return index;
	}

	getTask(uid: number): Task {
		const task = this.tasks.get(uid);
		if (!task) throw new ApiError(404, 'task_not_found', `Task \`${uid}\` not found.`);
		return task;
	}

	/**
	 * Records a task as enqueued and runs `work` after the current request has been answered,
	 * strictly in enqueue order. A thrown ApiError fails the task with that error.
	 */
	enqueue(indexUid: string | null, type: string, details: Record<string, unknown>, work: () => Record<string, unknown> | void) {
		const task: Task = {
			uid: this.nextTaskUid++,
			batchUid: null,
			indexUid,
			status: 'enqueued',
			type,
			canceledBy: null,
			details,
			error: null,
			duration: null,
			enqueuedAt: new Date().toISOString(),
			startedAt: null,
			finishedAt: null
		};
		this.tasks.set(task.uid, task);
		if (this.tasks.size > StandinEngine.TASKS_KEPT) this.tasks.delete(task.uid - StandinEngine.TASKS_KEPT);
		this.queue = this.queue.then(
			() =>
				new Promise<void>((resolve) => {
					setImmediate(() => {
						const t0 = performance.now();
						task.status = 'processing';
						task.startedAt = new Date().toISOString();
						task.batchUid = task.uid;
						try {
							const extra = work();
							if (extra) task.details = { ...task.details, ...extra };
							task.status = 'succeeded';
						} catch (e) {
							task.status = 'failed';
							task.error = (e instanceof ApiError ? e : new ApiError(500, 'internal', e instanceof Error ? e.message : String(e), 'internal')).toJSON();
						}
						task.finishedAt = new Date().toISOString();
						task.duration = `PT${((performance.now() - t0) / 1000).toFixed(6)}S`;
						resolve();
					});
				})
		);
		return { taskUid: task.uid, indexUid, status: task.status, type, enqueuedAt: task.enqueuedAt };
	}

	/** The index, created on first write as the engine does for documents and settings. */
	indexForWrite(uid: string, primaryKey: string | null): StandinIndex {
		let index = this.indexes.get(uid);
		if (!index) {
			index = new StandinIndex(uid, primaryKey);
			this.indexes.set(uid, index);
		}
		return index;
	}

	/** Resolves once every task enqueued so far has finished. */
	idle(): Promise<void> {
		return this.queue;
	}
}
