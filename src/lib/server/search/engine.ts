/**
 * The one module that talks to the search engine, through the official client. Every function
 * takes the engine handle first (as queries take `db`), so scripts and tests pass their own and
 * the app passes `searchClient()` from ./index. Writes wait for their task and check its status:
 * the client resolves a failed task without throwing.
 *
 * Tenancy: `searchEntries` builds the organisation and visibility filter itself from its arguments;
 * callers give structured filters, never filter strings, so they can neither forget nor widen it.
 */
import {
	Meilisearch,
	MeilisearchApiError,
	MeilisearchRequestError,
	MeilisearchRequestTimeOutError,
	MeilisearchTaskTimeOutError,
	type EnqueuedTaskPromise,
	type Task
} from 'meilisearch';
import {
	ENTRIES_INDEX,
	ENTRIES_PRIMARY_KEY,
	ENTRIES_SETTINGS,
	type EntryDocument
} from '../../../../search/settings';

export type { EntryDocument } from '../../../../search/settings';

export interface SearchEngine {
	client: Meilisearch;
	/** The entries index uid (tests use their own). */
	index: string;
	url: string;
}

export interface SearchEngineOptions {
	url: string;
	key?: string;
	index?: string;
	/** Per-request timeout in ms (default 10 s). */
	timeout?: number;
}

/** The engine cannot be reached (down, wrong URL, timing out). */
export class SearchUnavailableError extends Error {
	override name = 'SearchUnavailableError';
}

/** The engine answered with an error, or a task it ran failed. `code` is the engine's error code. */
export class SearchEngineError extends Error {
	override name = 'SearchEngineError';
	constructor(
		message: string,
		readonly code: string
	) {
		super(message);
	}
}

export function createSearchEngine(options: SearchEngineOptions): SearchEngine {
	return {
		client: new Meilisearch({ host: options.url, apiKey: options.key, timeout: options.timeout ?? 10_000 }),
		index: options.index ?? ENTRIES_INDEX,
		url: options.url
	};
}

/** Runs one engine call, turning the client's errors into ours with a clear message. */
async function call<T>(engine: SearchEngine, what: string, fn: () => Promise<T>): Promise<T> {
	try {
		return await fn();
	} catch (e) {
		if (e instanceof MeilisearchApiError) {
			const code = e.cause?.code ?? `http_${e.response.status}`;
			if (e.response.status === 401 || e.response.status === 403) {
				throw new SearchEngineError(`The search service at ${engine.url} refused the key (${code}): check MEILISEARCH_KEY.`, code);
			}
			throw new SearchEngineError(`Search ${what} failed: ${e.message} (${code}).`, code);
		}
		if (e instanceof MeilisearchRequestTimeOutError || (e instanceof MeilisearchRequestError && e.cause instanceof MeilisearchRequestTimeOutError)) {
			throw new SearchUnavailableError(`The search service at ${engine.url} did not answer in time (${what}).`);
		}
		if (e instanceof MeilisearchRequestError) {
			throw new SearchUnavailableError(
				`The search service at ${engine.url} is not reachable (${what}). Start it, or unset MEILISEARCH_URL to use the local stand-in.`
			);
		}
		if (e instanceof MeilisearchTaskTimeOutError) {
			throw new SearchUnavailableError(`The search service at ${engine.url} did not finish ${what} in time.`);
		}
		throw e;
	}
}

/** Waits for a write's task and throws when it failed. */
async function settle(engine: SearchEngine, what: string, write: () => EnqueuedTaskPromise, timeout = 60_000): Promise<Task> {
	const task = await call(engine, what, () => write().waitTask({ timeout, interval: 25 }));
	if (task.status !== 'succeeded') {
		const code = task.error?.code ?? task.status;
		throw new SearchEngineError(`Search ${what} failed: ${task.error?.message ?? task.status} (${code}).`, code);
	}
	return task;
}

export async function isSearchHealthy(engine: SearchEngine): Promise<boolean> {
	return engine.client.isHealthy();
}

const sameSet = (a: unknown, b: unknown) =>
	Array.isArray(a) && Array.isArray(b) && a.length === b.length && a.every((x) => b.some((y) => JSON.stringify(x) === JSON.stringify(y)));

/** Whether every setting we define already holds on the engine (which may add fields of its own). */
function settingsHold(desired: Record<string, unknown>, actual: Record<string, unknown>): boolean {
	return Object.entries(desired).every(([key, want]) => {
		const have = actual[key];
		if (key === 'searchableAttributes' || key === 'rankingRules') return JSON.stringify(want) === JSON.stringify(have);
		if (Array.isArray(want)) return sameSet(want, have);
		if (want && typeof want === 'object') {
			if (!have || typeof have !== 'object') return false;
			if (key === 'synonyms') {
				const h = have as Record<string, unknown>;
				return Object.keys(want).length === Object.keys(h).length && Object.entries(want).every(([k, v]) => sameSet(v, h[k]));
			}
			return settingsHold(want as Record<string, unknown>, have as Record<string, unknown>);
		}
		return want === have;
	});
}

/**
 * Creates the entries index when missing and applies search/settings.ts when the engine's
 * settings differ. Idempotent and cheap when nothing changed (one or two reads). `created` tells
 * the caller that the index was empty, so it should rebuild it from the database.
 */
export async function ensureIndex(engine: SearchEngine): Promise<{ created: boolean; settingsUpdated: boolean }> {
	let created = false;
	try {
		await call(engine, 'index lookup', () => engine.client.index(engine.index).getRawInfo());
	} catch (e) {
		if (!(e instanceof SearchEngineError && e.code === 'index_not_found')) throw e;
		try {
			await settle(engine, 'index creation', () => engine.client.createIndex(engine.index, { primaryKey: ENTRIES_PRIMARY_KEY }));
		} catch (err) {
			// Another app instance created it in between: fine.
			if (!(err instanceof SearchEngineError && err.code === 'index_already_exists')) throw err;
		}
		created = true;
	}
	const index = engine.client.index(engine.index);
	const current = await call(engine, 'settings lookup', () => index.getSettings());
	if (settingsHold(ENTRIES_SETTINGS, current as Record<string, unknown>)) return { created, settingsUpdated: false };
	await settle(engine, 'settings update', () => index.updateSettings(ENTRIES_SETTINGS));
	return { created, settingsUpdated: true };
}

/** Adds or replaces whole documents. */
export async function indexDocuments(engine: SearchEngine, docs: readonly EntryDocument[]): Promise<void> {
	if (docs.length === 0) return;
	await settle(engine, 'indexing', () =>
		engine.client.index<EntryDocument>(engine.index).addDocuments(docs.map(withoutMarkers), { primaryKey: ENTRIES_PRIMARY_KEY })
	);
}

/** Merges fields into documents already indexed (e.g. a new view count). */
export async function updateDocuments(engine: SearchEngine, patches: readonly (Partial<EntryDocument> & { id: string })[]): Promise<void> {
	if (patches.length === 0) return;
	await settle(engine, 'partial update', () =>
		engine.client.index<EntryDocument>(engine.index).updateDocuments([...patches], { primaryKey: ENTRIES_PRIMARY_KEY })
	);
}

export async function deleteDocuments(engine: SearchEngine, ids: readonly string[]): Promise<void> {
	if (ids.length === 0) return;
	await settle(engine, 'deletion', () => engine.client.index(engine.index).deleteDocuments([...ids]));
}

/** Removes every document of one organisation (when the organisation is deleted). */
export async function deleteByFilter(engine: SearchEngine, orgId: string): Promise<void> {
	await settle(engine, 'organisation deletion', () => engine.client.index(engine.index).deleteDocuments({ filter: `orgId = ${quote(orgId)}` }));
}

/** Empties the index (settings stay). Only for reindexing from scratch and tests. */
export async function deleteAllDocuments(engine: SearchEngine): Promise<void> {
	await settle(engine, 'emptying the index', () => engine.client.index(engine.index).deleteAllDocuments());
}

export async function getDocument(engine: SearchEngine, id: string): Promise<EntryDocument | undefined> {
	try {
		return await call(engine, 'document lookup', () => engine.client.index<EntryDocument>(engine.index).getDocument(id));
	} catch (e) {
		if (e instanceof SearchEngineError && e.code === 'document_not_found') return undefined;
		throw e;
	}
}

/** Every document id in the index (paged reads; for reindexing and checks). */
export async function listDocumentIds(engine: SearchEngine, pageSize = 1000): Promise<string[]> {
	const ids: string[] = [];
	const index = engine.client.index<EntryDocument>(engine.index);
	for (let offset = 0; ; offset += pageSize) {
		const page = await call(engine, 'document listing', () => index.getDocuments({ fields: ['id'], limit: pageSize, offset }));
		for (const d of page.results) ids.push(String(d.id));
		if (page.results.length < pageSize) return ids;
	}
}

/**
 * Rebuilds the index from the source of truth without a gap: upserts every document the source
 * yields, then deletes those the index holds but the source no longer has.
 */
export async function reindex(
	engine: SearchEngine,
	source: AsyncIterable<readonly EntryDocument[]>,
	onProgress?: (indexed: number) => void
): Promise<{ indexed: number; removed: number }> {
	await ensureIndex(engine);
	const seen = new Set<string>();
	for await (const batch of source) {
		await indexDocuments(engine, batch);
		for (const d of batch) seen.add(d.id);
		onProgress?.(seen.size);
	}
	const stale = (await listDocumentIds(engine)).filter((id) => !seen.has(id));
	for (let i = 0; i < stale.length; i += 1000) await deleteDocuments(engine, stale.slice(i, i + 1000));
	return { indexed: seen.size, removed: stale.length };
}

// ---------------------------------------------------------------- search

/**
 * Who is searching, with the same visibility as reading entries: viewers see published entries,
 * contributors also those they wrote, authors and admins everything (see entries' `readerFor`).
 */
export interface SearchReader {
	userId: string;
	seesAll: boolean;
	seesOwn: boolean;
}

export const FACETS = ['componentKind', 'class', 'tags', 'assembly', 'status', 'traceClasses'] as const;
export type Facet = (typeof FACETS)[number];

export const SORTS = {
	relevance: [],
	updated: ['updatedAt:desc'],
	published: ['publishedAt:desc'],
	popular: ['popularity:desc']
} as const satisfies Record<string, readonly string[]>;
export type SearchSort = keyof typeof SORTS;

export const HIGHLIGHTED = ['title', 'symptom', 'cause', 'fix', 'body', 'partNumber', 'tags'] as const;
export type HighlightedField = (typeof HIGHLIGHTED)[number];

export interface EntrySearch {
	orgId: string;
	reader: SearchReader;
	q?: string;
	/** Values within one facet are alternatives (OR); different facets must all hold (AND). */
	filters?: Partial<Record<Facet, readonly string[]>>;
	facets?: readonly Facet[];
	sort?: SearchSort;
	limit?: number;
	offset?: number;
}

export interface EntryHit {
	document: EntryDocument;
	/** HTML-safe text with matches in <mark>…</mark>: the entry's own text is escaped. */
	highlights: Partial<Record<HighlightedField, string | string[]>>;
	/**
	 * A short HTML-safe excerpt around the first match in the symptom, cause, fix or notes (in
	 * that order), cut at word boundaries; null when the query matched none of them.
	 */
	snippet: { field: SnippetField; html: string } | null;
}

export const SNIPPET_FIELDS = ['symptom', 'cause', 'fix', 'body'] as const;
export type SnippetField = (typeof SNIPPET_FIELDS)[number];
/** About two lines of a result list on a phone. */
export const SNIPPET_CHARS = 180;

export interface EntrySearchResult {
	hits: EntryHit[];
	/** The engine's estimate of all matches (exact in the stand-in). */
	total: number;
	facets: Partial<Record<Facet, Record<string, number>>>;
	query: string;
	processingTimeMs: number;
}

/** A filter string literal: double quotes, with backslash and quote escaped. */
export function quote(value: string): string {
	return `"${value.replace(/\\/g, '\\\\').replace(/"/g, '\\"')}"`;
}

/** Published entries for everyone; a contributor's own entries too; everything for authors and admins. */
export function visibilityFilter(reader: SearchReader): string | null {
	if (reader.seesAll) return null;
	const published = `status = ${quote('published')}`;
	if (reader.seesOwn && reader.userId) return `(${published} OR authorId = ${quote(reader.userId)})`;
	return published;
}

/** The filter for one search: tenancy and visibility first, then the caller's facet choices. */
export function entryFilter(search: Pick<EntrySearch, 'orgId' | 'reader' | 'filters'>): string[] {
	if (!search.orgId) throw new Error('searchEntries needs an organisation id.');
	const clauses = [`orgId = ${quote(search.orgId)}`];
	const status = visibilityFilter(search.reader);
	if (status) clauses.push(status);
	for (const facet of FACETS) {
		const values = search.filters?.[facet];
		if (!values || values.length === 0) continue;
		clauses.push(`${facet} IN [${values.map(quote).join(', ')}]`);
	}
	return clauses;
}

// Control characters cannot occur in stored text we escape, so they mark matches unambiguously.
const PRE = '\u0002';
const POST = '\u0003';
const escapeHtml = (s: string) => s.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
const markSafe = (s: string) => escapeHtml(s).replaceAll(PRE, '<mark>').replaceAll(POST, '</mark>');
const MARKERS = /[\u0002\u0003]/g;

/** Stored text never carries the match markers, so a highlight cannot be forged by an entry. */
function withoutMarkers(doc: EntryDocument): EntryDocument {
	const clean = (v: unknown): unknown =>
		typeof v === 'string' ? v.replace(MARKERS, '') : Array.isArray(v) ? v.map(clean) : v;
	return Object.fromEntries(Object.entries(doc).map(([k, v]) => [k, clean(v)])) as unknown as EntryDocument;
}

/**
 * Crops marked text (markers still the control characters) to about `max` characters around its
 * first match, at spaces, and balances the markers the cut may have split. Escaping comes after,
 * so a cut can never split an entity or a tag.
 */
export function cropMarked(text: string, max = SNIPPET_CHARS): string {
	const flat = text.replace(/\s+/g, ' ').trim();
	const first = flat.indexOf(PRE);
	if (first < 0 || flat.length <= max) return flat;
	let start = Math.max(0, first - Math.floor(max / 3));
	if (start > 0) {
		const space = flat.indexOf(' ', start);
		start = space >= 0 && space < first ? space + 1 : Math.min(start, first);
	}
	let end = Math.min(flat.length, start + max);
	if (end < flat.length) {
		const space = flat.lastIndexOf(' ', end);
		if (space > flat.indexOf(POST, first)) end = space;
	}
	let out = flat.slice(start, end);
	const lastPre = out.lastIndexOf(PRE);
	if (lastPre > out.lastIndexOf(POST)) out += POST;
	const firstPost = out.indexOf(POST);
	if (firstPost >= 0 && (out.indexOf(PRE) < 0 || firstPost < out.indexOf(PRE))) out = PRE + out;
	return `${start > 0 ? '…' : ''}${out}${end < flat.length ? '…' : ''}`;
}

function snippetOf(formatted: Record<string, unknown> | undefined): EntryHit['snippet'] {
	for (const field of SNIPPET_FIELDS) {
		const value = formatted?.[field];
		if (typeof value === 'string' && value.includes(PRE)) return { field, html: markSafe(cropMarked(value)) };
	}
	return null;
}

function safeHighlight(value: unknown): string | string[] | undefined {
	if (typeof value === 'string') return markSafe(value);
	if (Array.isArray(value)) return value.filter((v): v is string => typeof v === 'string').map(markSafe);
	return undefined;
}

/**
 * Searches one organisation's entries. The organisation and the reader's visibility are always
 * applied here; `filters` can only narrow. Limits are clamped to 1–100.
 */
export async function searchEntries(engine: SearchEngine, search: EntrySearch): Promise<EntrySearchResult> {
	const limit = Math.min(100, Math.max(1, Math.trunc(search.limit ?? 20)));
	const offset = Math.max(0, Math.trunc(search.offset ?? 0));
	const facets = [...new Set(search.facets ?? [])].filter((f) => (FACETS as readonly string[]).includes(f));
	const response = await call(engine, 'query', () =>
		// The engine reads only the first words of a query anyway; a bound keeps requests small.
		engine.client.index<EntryDocument>(engine.index).search((search.q ?? '').trim().slice(0, 500), {
			filter: entryFilter(search),
			facets,
			sort: [...SORTS[search.sort ?? 'relevance']],
			limit,
			offset,
			attributesToHighlight: [...HIGHLIGHTED],
			highlightPreTag: PRE,
			highlightPostTag: POST
		})
	);
	return {
		hits: response.hits.map((hit) => {
			const { _formatted, ...document } = hit as EntryDocument & { _formatted?: Record<string, unknown> };
			const highlights: EntryHit['highlights'] = {};
			for (const field of HIGHLIGHTED) {
				const h = safeHighlight(_formatted?.[field]);
				if (h !== undefined) highlights[field] = h;
			}
			return { document: document as EntryDocument, highlights, snippet: snippetOf(_formatted) };
		}),
		total: response.estimatedTotalHits ?? response.hits.length,
		facets: (response.facetDistribution ?? {}) as EntrySearchResult['facets'],
		query: response.query,
		processingTimeMs: response.processingTimeMs
	};
}
