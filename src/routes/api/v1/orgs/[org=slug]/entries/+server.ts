import { json } from '@sveltejs/kit';
import { entryCreate, entryListQuery } from '$lib/schemas/entries';
import { apiError, readJson, toApiIssues } from '$lib/server/api/errors';
import { queryObject } from '$lib/server/api/query';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { entryJson } from '$lib/server/entries/json';
import { listEntries } from '$lib/server/entries/queries';
import { readerFor } from '$lib/server/entries/rules';
import { createEntry } from '$lib/server/entries/service';
import type { RequestHandler } from './$types';

/** Entries the caller may see, filtered, sorted, a page at a time (`nextCursor` for the next). */
export const GET: RequestHandler = async ({ params, url }) => {
	const member = await requireMember(params.org, 'entry:read');
	const query = entryListQuery.safeParse(queryObject(url));
	if (!query.success) return apiError(400, 'invalid_input', 'The filters are not valid.', toApiIssues(query.error.issues));
	const page = await listEntries(db, member.orgId, readerFor(member), query.data);
	return json({ entries: page.entries.map(entryJson), nextCursor: page.nextCursor });
};

/** A new draft, written by the caller. */
export const POST: RequestHandler = async ({ params, request }) => {
	const member = await requireMember(params.org, 'entry:draft');
	const body = await readJson(request, 512 * 1024);
	if (body === undefined) return apiError(400, 'invalid_input', 'Send the entry as a JSON object (at most 512 kB).');
	const parsed = entryCreate.safeParse(body);
	if (!parsed.success) return apiError(400, 'invalid_input', 'Some fields are not valid.', toApiIssues(parsed.error.issues));
	const entry = await createEntry(db, member, parsed.data);
	return json({ entry: entryJson(entry) }, { status: 201, headers: { location: `/api/v1/orgs/${member.orgSlug}/entries/${entry.id}` } });
};
