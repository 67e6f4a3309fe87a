/**
 * One search as the search screen and `GET /api/v1/orgs/{org}/search` run it: the query-string
 * shape (src/lib/schemas/search.ts) in, hits with safe highlights, facet counts, the total and the
 * time taken out. Facet counts are disjunctive: a facet's counts ignore that facet's own choice, so
 * picking "zener" still shows how many diodes there are and lets the technician add them.
 */
import type { SearchFacetName, SearchQuery } from '../../schemas/search';
import { searchEntries, type EntrySearchResult, type Facet, type SearchEngine, type SearchReader } from './engine';

const FACET_FIELDS: Readonly<Record<SearchFacetName, Facet>> = {
	kind: 'componentKind',
	class: 'class',
	tags: 'tags',
	assembly: 'assembly',
	status: 'status'
};

/** Facets this reader is offered: status only for those who see more than published entries. */
export function facetsFor(reader: SearchReader): SearchFacetName[] {
	return reader.seesAll ? ['kind', 'class', 'tags', 'assembly', 'status'] : ['kind', 'class', 'tags', 'assembly'];
}

/** A message when the query asks for something this reader may not filter by; null when fine. */
export function searchQueryProblem(query: SearchQuery, reader: SearchReader): string | null {
	if (query.status?.length && !reader.seesAll) return 'Filtering by status is for authors and admins; leave the status out.';
	return null;
}

export interface FacetValue {
	value: string;
	count: number;
	selected: boolean;
}

export interface SearchHitJson {
	id: string;
	/** The entry's page. */
	url: string;
	title: string;
	/** HTML-safe: the entry's text escaped, matches in <mark>. */
	titleHtml: string;
	symptom: string;
	symptomHtml: string;
	snippet: { field: string; html: string } | null;
	componentKind: string | null;
	class: string | null;
	assembly: string | null;
	partNumber: string | null;
	tags: string[];
	status: string;
	updatedAt: string;
	publishedAt: string | null;
	helpedCount: number;
	views: number;
}

export interface SearchResultJson {
	query: SearchQuery;
	total: number;
	hits: SearchHitJson[];
	facets: Partial<Record<SearchFacetName, FacetValue[]>>;
	timing: { engineMs: number; totalMs: number };
}

function facetValues(counts: Record<string, number> | undefined, selected: readonly string[] = []): FacetValue[] {
	const out = new Map<string, FacetValue>();
	for (const [value, count] of Object.entries(counts ?? {})) out.set(value, { value, count, selected: selected.includes(value) });
	for (const value of selected) if (!out.has(value)) out.set(value, { value, count: 0, selected: true });
	return [...out.values()].sort((a, b) => b.count - a.count || a.value.localeCompare(b.value));
}

/**
 * Runs the search for one organisation and reader. `entryUrl` builds each hit's page address.
 * Throws what the engine module throws (SearchUnavailableError when the engine is down).
 */
export async function runEntrySearch(
	engine: SearchEngine,
	orgId: string,
	reader: SearchReader,
	query: SearchQuery,
	entryUrl: (id: string) => string
): Promise<SearchResultJson> {
	const started = performance.now();
	const offered = facetsFor(reader);
	const filters: Partial<Record<Facet, readonly string[]>> = {};
	for (const name of offered) {
		const values = query[name];
		if (values?.length) filters[FACET_FIELDS[name]] = values;
	}
	const active = offered.filter((name) => query[name]?.length);
	const base = { orgId, reader, q: query.q };
	const [main, ...perFacet] = await Promise.all([
		searchEntries(engine, {
			...base,
			filters,
			facets: offered.filter((n) => !active.includes(n)).map((n) => FACET_FIELDS[n]),
			sort: query.sort === 'date' ? 'updated' : 'relevance',
			limit: query.limit,
			offset: query.offset
		}),
		// Each chosen facet counts over the other choices only.
		...active.map((name) => {
			const others = { ...filters };
			delete others[FACET_FIELDS[name]];
			return searchEntries(engine, { ...base, filters: others, facets: [FACET_FIELDS[name]], limit: 1 });
		})
	]);
	const counts: Partial<Record<Facet, Record<string, number>>> = { ...main.facets };
	perFacet.forEach((r: EntrySearchResult, k) => {
		const field = FACET_FIELDS[active[k]];
		counts[field] = r.facets[field];
	});
	const facets: SearchResultJson['facets'] = {};
	for (const name of offered) facets[name] = facetValues(counts[FACET_FIELDS[name]], query[name]);
	const escapeHtml = (s: string) => s.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
	return {
		query,
		total: main.total,
		hits: main.hits.map(({ document: d, highlights, snippet }) => ({
			id: d.id,
			url: entryUrl(d.id),
			title: d.title,
			titleHtml: typeof highlights.title === 'string' ? highlights.title : escapeHtml(d.title),
			symptom: d.symptom.split('\n')[0],
			symptomHtml: typeof highlights.symptom === 'string' ? highlights.symptom.split('\n')[0] : escapeHtml(d.symptom.split('\n')[0]),
			// The symptom line is shown already; a snippet from it would repeat it.
			snippet: snippet && !(snippet.field === 'symptom' && !d.symptom.includes('\n')) ? snippet : null,
			componentKind: d.componentKind,
			class: d.class,
			assembly: d.assembly,
			partNumber: d.partNumber,
			tags: d.tags,
			status: d.status,
			updatedAt: new Date(d.updatedAt).toISOString(),
			publishedAt: d.publishedAt === null ? null : new Date(d.publishedAt).toISOString(),
			helpedCount: d.helpedCount,
			views: d.views
		})),
		facets,
		timing: { engineMs: main.processingTimeMs, totalMs: Math.round((performance.now() - started) * 10) / 10 }
	};
}
