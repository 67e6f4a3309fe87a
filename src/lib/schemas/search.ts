import { z } from 'zod';
import { SIGNATURE_CLASSES } from '../signature/types';
import { COMPONENT_KINDS, ENTRY_STATUSES, LIMITS } from './entries';

/**
 * The search query string, shared by the search page (its GET form and its script) and
 * `GET /api/v1/orgs/{org}/search`. Facet values repeat (`?kind=zener&kind=diode`) or come
 * comma-separated; values within one facet are alternatives, different facets must all hold.
 */

const list = <T extends z.ZodType<string, string>>(item: T, max: number, what: string) =>
	z
		.union([z.array(z.string()), z.string()])
		.transform((v) => (Array.isArray(v) ? v : [v]).flatMap((s) => s.split(',')).map((s) => s.trim()).filter(Boolean))
		.pipe(z.array(item).max(max, `Choose at most ${max} ${what}.`).transform((xs) => [...new Set(xs)]))
		.optional();

export const SEARCH_SORTS = ['relevance', 'date'] as const;
export type SearchSortChoice = (typeof SEARCH_SORTS)[number];

export const SEARCH_SORT_LABELS: Readonly<Record<SearchSortChoice, string>> = {
	relevance: 'Best match',
	date: 'Newest first'
};

/** The facets the search screen offers, by their query-string names. */
export const SEARCH_FACETS = ['kind', 'class', 'tags', 'assembly', 'status'] as const;
export type SearchFacetName = (typeof SEARCH_FACETS)[number];

export const SEARCH_FACET_LABELS: Readonly<Record<SearchFacetName, string>> = {
	kind: 'Component',
	class: 'Curve',
	tags: 'Tags',
	assembly: 'Assembly',
	status: 'Status'
};

export const SEARCH_LIMITS = { q: 200, limit: 50, offset: 980 } as const;

export const searchQuery = z.object({
	q: z
		.string()
		.max(SEARCH_LIMITS.q, `Keep the search to ${SEARCH_LIMITS.q} characters or fewer.`)
		.optional()
		.transform((s) => (s ?? '').trim()),
	kind: list(z.enum(COMPONENT_KINDS, { error: 'Unknown component kind.' }), COMPONENT_KINDS.length, 'component kinds'),
	class: list(z.enum(SIGNATURE_CLASSES as [string, ...string[]], { error: 'Unknown curve class.' }), SIGNATURE_CLASSES.length, 'curve classes'),
	tags: list(z.string().max(LIMITS.tag, `Keep each tag to ${LIMITS.tag} characters or fewer.`), 20, 'tags'),
	assembly: list(z.string().max(LIMITS.shortField, `Keep the assembly to ${LIMITS.shortField} characters or fewer.`), 20, 'assemblies'),
	status: list(z.enum(ENTRY_STATUSES, { error: 'Unknown status.' }), ENTRY_STATUSES.length, 'statuses'),
	sort: z.enum(SEARCH_SORTS, { error: 'Sort by relevance or date.' }).default('relevance'),
	limit: z.coerce
		.number({ error: 'The limit must be a number.' })
		.int('The limit must be a whole number.')
		.min(1, 'The limit must be at least 1.')
		.max(SEARCH_LIMITS.limit, `The limit is at most ${SEARCH_LIMITS.limit}.`)
		.default(20),
	offset: z.coerce
		.number({ error: 'The offset must be a number.' })
		.int('The offset must be a whole number.')
		.min(0, 'The offset cannot be negative.')
		.max(SEARCH_LIMITS.offset, `Results stop at ${SEARCH_LIMITS.offset + 20}: narrow the search instead.`)
		.default(0)
});
export type SearchQuery = z.infer<typeof searchQuery>;

/** The query string of a search (defaults left out), for links, the address bar and the API. */
export function searchParams(query: Partial<SearchQuery>): URLSearchParams {
	const p = new URLSearchParams();
	if (query.q) p.set('q', query.q);
	for (const facet of SEARCH_FACETS) for (const v of query[facet] ?? []) p.append(facet, v);
	if (query.sort && query.sort !== 'relevance') p.set('sort', query.sort);
	if (query.limit && query.limit !== 20) p.set('limit', String(query.limit));
	if (query.offset) p.set('offset', String(query.offset));
	return p;
}
