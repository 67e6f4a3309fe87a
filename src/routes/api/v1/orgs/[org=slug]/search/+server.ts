import { json } from '@sveltejs/kit';
import { searchQuery } from '$lib/schemas/search';
import { apiError, toApiIssues } from '$lib/server/api/errors';
import { queryObject } from '$lib/server/api/query';
import { requireMember } from '$lib/server/auth/guard';
import { readerFor } from '$lib/server/entries/rules';
import { searchClient, SearchUnavailableError } from '$lib/server/search';
import { runEntrySearch, searchQueryProblem } from '$lib/server/search/entry-search';
import type { RequestHandler } from './$types';

/**
 * Entries matching a symptom description: `q`, facet filters (`kind`, `class`, `tags`,
 * `assembly`, and `status` for authors and admins), `sort` (relevance | date), `limit`, `offset`.
 * Only the caller's organisation, only what their role may read; highlights are HTML-safe.
 */
export const GET: RequestHandler = async ({ params, url }) => {
	const member = await requireMember(params.org, 'search:run');
	const parsed = searchQuery.safeParse(queryObject(url));
	if (!parsed.success) return apiError(400, 'invalid_input', 'The search is not valid.', toApiIssues(parsed.error.issues));
	const reader = readerFor(member);
	const problem = searchQueryProblem(parsed.data, reader);
	if (problem) return apiError(400, 'invalid_input', problem, [{ path: 'status', message: problem }]);
	try {
		const result = await runEntrySearch(searchClient(), member.orgId, reader, parsed.data, (id) => `/o/${member.orgSlug}/entries/${id}`);
		return json(result, { headers: { 'cache-control': 'private, no-store' } });
	} catch (e) {
		// Not configured (no MEILISEARCH_URL) answers like an engine that is down.
		if (e instanceof SearchUnavailableError || (e instanceof Error && e.message.startsWith('Search is not configured'))) {
			return apiError(503, 'search_unavailable', 'Search is not available right now. Try again in a minute; nothing you wrote is lost.');
		}
		throw e;
	}
};
