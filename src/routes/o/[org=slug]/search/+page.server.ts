import { searchQuery, type SearchQuery } from '$lib/schemas/search';
import { queryObject } from '$lib/server/api/query';
import { requireMember } from '$lib/server/auth/guard';
import { readerFor } from '$lib/server/entries/rules';
import { searchClient, SearchUnavailableError } from '$lib/server/search';
import { facetsFor, runEntrySearch, searchQueryProblem, type SearchResultJson } from '$lib/server/search/entry-search';
import type { PageServerLoad } from './$types';

/**
 * The search screen without script: the GET form lands here and the results are rendered on the
 * server. With script the page asks the JSON API as the technician types, and keeps the address in
 * step, so a reload or a shared link shows the same results.
 */
export const load: PageServerLoad = async ({ params, url }) => {
	const member = await requireMember(params.org, 'search:run');
	const reader = readerFor(member);
	const facetNames = facetsFor(reader);
	const parsed = searchQuery.safeParse(queryObject(url));
	let problem: string | null = null;
	let query: SearchQuery;
	if (parsed.success) {
		query = parsed.data;
		problem = searchQueryProblem(query, reader);
	} else {
		problem = parsed.error.issues[0]?.message ?? 'The search is not valid.';
		const q = url.searchParams.get('q') ?? '';
		query = searchQuery.parse({ q: q.slice(0, 200) });
	}
	let result: SearchResultJson | null = null;
	if (!problem) {
		try {
			result = await runEntrySearch(searchClient(), member.orgId, reader, query, (id) => `/o/${member.orgSlug}/entries/${id}`);
		} catch (e) {
			if (!(e instanceof SearchUnavailableError || (e instanceof Error && e.message.startsWith('Search is not configured')))) throw e;
			problem = 'Search is not available right now. Try again in a minute, or match a capture instead.';
		}
	}
	return { query, result, problem, facetNames };
};
