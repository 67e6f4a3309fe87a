import { error, json } from '@sveltejs/kit';
import { entryTransition } from '$lib/schemas/entries';
import { apiError, readJson, toApiIssues } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { entryJson } from '$lib/server/entries/json';
import { TRANSITION_MESSAGES } from '$lib/server/entries/rules';
import { changeEntryStatus } from '$lib/server/entries/review';
import type { RequestHandler } from './$types';

/**
 * `{ action: submit | publish | return | archive | reopen, comment? }`; the rules decide who may.
 * Submitting mails the reviewers; returning and publishing a submission mail its writer.
 */
export const POST: RequestHandler = async ({ params, request, url }) => {
	// The least any status change needs; the transition's own permission is checked with the entry.
	const member = await requireMember(params.org, 'entry:submit');
	const parsed = entryTransition.safeParse((await readJson(request)) ?? {});
	if (!parsed.success) return apiError(400, 'invalid_input', 'The status change is not valid.', toApiIssues(parsed.error.issues));
	const result = await changeEntryStatus(db, member, params.id, parsed.data.action, parsed.data.comment, url.origin);
	if (result.kind === 'done') return json({ entry: entryJson(result.entry) });
	if (result.kind === 'not_found') error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such entry.' } });
	const status = result.reason === 'forbidden' ? 403 : result.reason === 'comment_required' || result.reason === 'symptom_required' ? 400 : 409;
	return apiError(status, result.reason === 'forbidden' ? 'forbidden' : 'invalid_transition', TRANSITION_MESSAGES[result.reason]);
};
