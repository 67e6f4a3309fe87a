import { json } from '@sveltejs/kit';
import { requireMember, requireUser } from '$lib/server/auth/guard';
import { apiError, rateLimited, readJson, toApiIssues } from '$lib/server/api/errors';
import { db } from '$lib/server/db';
import { config } from '$lib/server/env';
import { sendMail } from '$lib/server/mail/send';
import { invitationMailLimits, inviteWithinLimits } from '$lib/server/orgs/invitation-limits';
import { invitationMail } from '$lib/server/orgs/invitation-mail';
import { listPendingInvitations } from '$lib/server/orgs/invitations';
import { invitationCreate } from '$lib/schemas/orgs';
import type { RequestHandler } from './$types';

/** Pending invitations (admin). */
export const GET: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'invitation:manage');
	const pending = await listPendingInvitations(db, member.orgId);
	return json({
		invitations: pending.map((i) => ({ id: i.id, email: i.email, role: i.role, expiresAt: i.expiresAt.toISOString(), expired: i.expired }))
	});
};

/**
 * Invites `{ email, role }` (admin). 201 with the invitation; the link goes only by e-mail. 429
 * `rate_limited` (with Retry-After) once the organisation has sent its invitation mails for the hour.
 */
export const POST: RequestHandler = async ({ params, request, url }) => {
	const member = await requireMember(params.org, 'invitation:manage');
	const user = await requireUser();
	const body = await readJson(request);
	if (body === undefined) return apiError(400, 'invalid_input', 'Send a JSON body of at most 64 KiB.');
	const parsed = invitationCreate.safeParse(body);
	if (!parsed.success) return apiError(400, 'invalid_input', 'The invitation is not valid.', toApiIssues(parsed.error.issues));
	const result = await db.transaction().execute((trx) =>
		inviteWithinLimits(trx, { orgId: member.orgId, email: parsed.data.email, role: parsed.data.role, invitedBy: member.userId }, invitationMailLimits(config()))
	);
	if (!result.ok && result.code === 'rate_limited') return rateLimited(result.message, result.retryAfterSeconds);
	if (!result.ok) return apiError(409, 'conflict', result.message, [{ path: 'email', message: result.message }]);
	const mailed = await sendMail(
		parsed.data.email,
		invitationMail({ url: `${url.origin}/invite/${result.token}`, orgName: member.orgName, role: parsed.data.role, inviter: user.name ?? user.email, expiresAt: result.expiresAt })
	);
	return json(
		{ invitation: { id: result.id, email: parsed.data.email, role: parsed.data.role, expiresAt: result.expiresAt.toISOString() }, mailed },
		{ status: 201 }
	);
};
