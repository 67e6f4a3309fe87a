import { json, redirect } from '@sveltejs/kit';
import { apiError } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { setHelped } from '$lib/server/entries/helped';
import { readerFor } from '$lib/server/entries/rules';
import type { RequestHandler } from './$types';

/**
 * "This helped": POST marks the entry for the caller, DELETE takes the mark back; both answer
 * `{ helped, helpedCount }` and are idempotent. A plain HTML form (HelpedButton without script)
 * posts here with `helped=1|0` and `redirectTo`, and is sent back to that page.
 */
async function respond(request: Request, params: { org: string; id: string }, wanted: boolean | undefined) {
	const member = await requireMember(params.org, 'entry:read');
	const isForm = (request.headers.get('content-type') ?? '').includes('application/x-www-form-urlencoded');
	let helped = wanted ?? true;
	let back: string | null = null;
	if (isForm) {
		const form = await request.formData();
		helped = form.get('helped') !== '0';
		const to = String(form.get('redirectTo') ?? '');
		// Only back into this organisation's pages: never an open redirect.
		back = to.startsWith(`/o/${member.orgSlug}/`) && !to.startsWith('//') ? to : `/o/${member.orgSlug}/entries/${params.id}`;
	}
	const state = await setHelped(db, member.orgId, params.id, readerFor(member), helped);
	if (!state) return apiError(404, 'not_found', 'Not found');
	if (back) redirect(303, back);
	return json(state, { headers: { 'cache-control': 'no-store' } });
}

export const POST: RequestHandler = ({ request, params }) => respond(request, params, undefined);

export const DELETE: RequestHandler = ({ request, params }) => respond(request, params, false);
