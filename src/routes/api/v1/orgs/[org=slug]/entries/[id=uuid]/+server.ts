import { error, json } from '@sveltejs/kit';
import { entryUpdate } from '$lib/schemas/entries';
import { apiError, readJson, toApiIssues } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { entryJson, reviewEventJson, traceJson } from '$lib/server/entries/json';
import { findEntry } from '$lib/server/entries/queries';
import { listReviewEvents } from '$lib/server/entries/review-history';
import { maySeeReview, readerFor } from '$lib/server/entries/rules';
import { deleteEntry, updateEntry } from '$lib/server/entries/service';
import { listEntryTraces } from '$lib/server/traces/service';
import type { RequestHandler } from './$types';

function notFound(): never {
	error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such entry.' } });
}

/**
 * One entry with its traces' analyses (curves: GET …/traces/{id}?view=canonical) and, for those who
 * may read the review (authors, admins, the writer), its review history oldest first.
 */
export const GET: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:read');
	const entry = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!entry) notFound();
	const traces = await listEntryTraces(db, member.orgId, entry.id);
	const history = maySeeReview(member, entry) ? { reviewHistory: (await listReviewEvents(db, member.orgId, entry.id)).map(reviewEventJson) } : {};
	return json({ entry: entryJson(entry), traces: traces.map(traceJson), ...history });
};

/** Changes fields; `version` must be the version the change is based on (409 when it is stale). */
export const PATCH: RequestHandler = async ({ params, request }) => {
	const member = await requireMember(params.org, 'entry:draft');
	const body = await readJson(request, 512 * 1024);
	if (body === undefined) return apiError(400, 'invalid_input', 'Send the changes as a JSON object (at most 512 kB).');
	const parsed = entryUpdate.safeParse(body);
	if (!parsed.success) return apiError(400, 'invalid_input', 'Some fields are not valid.', toApiIssues(parsed.error.issues));
	const result = await updateEntry(db, member, params.id, parsed.data);
	switch (result.kind) {
		case 'saved':
			return json({ entry: entryJson(result.entry) });
		case 'not_found':
			notFound();
		// falls through: notFound() never returns
		case 'forbidden':
			return apiError(403, 'forbidden', 'Your role does not allow editing this entry in its current state.');
		case 'conflict':
			return json(
				{
					error: { code: 'conflict', message: `Someone saved version ${result.current.version} first. Nothing was saved; merge your changes into it and try again.` },
					current: entryJson(result.current),
					yours: result.yours
				},
				{ status: 409 }
			);
	}
};

/** Soft-deletes (admins); restorable for 30 days. */
export const DELETE: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:delete');
	if (!(await deleteEntry(db, member, params.id))) notFound();
	return new Response(null, { status: 204 });
};
