import { json } from '@sveltejs/kit';
import { requireMember, requireUser } from '$lib/server/auth/guard';
import { apiError, rateLimited } from '$lib/server/api/errors';
import { db } from '$lib/server/db';
import { config } from '$lib/server/env';
import { sendMail } from '$lib/server/mail/send';
import { invitationMailLimits, resendWithinLimits } from '$lib/server/orgs/invitation-limits';
import { invitationMail } from '$lib/server/orgs/invitation-mail';
import type { RequestHandler } from './$types';

/**
 * Mails a fresh link for an open invitation (admin); the old link stops working. 200 with the
 * invitation and whether the mail went out; 404 when it is not pending; 429 `rate_limited` (with
 * Retry-After) within the resend interval or past the invitation's or the organisation's count.
 */
export const POST: RequestHandler = async ({ params, url }) => {
	const member = await requireMember(params.org, 'invitation:manage');
	const user = await requireUser();
	const sent = await db.transaction().execute((trx) =>
		resendWithinLimits(trx, { orgId: member.orgId, id: params.id, actorId: member.userId }, invitationMailLimits(config()))
	);
	if (!sent.ok && sent.code === 'rate_limited') return rateLimited(sent.message, sent.retryAfterSeconds);
	if (!sent.ok) return apiError(404, 'not_found', sent.message);
	const mailed = await sendMail(
		sent.email,
		invitationMail({ url: `${url.origin}/invite/${sent.token}`, orgName: member.orgName, role: sent.role, inviter: user.name ?? user.email, expiresAt: sent.expiresAt })
	);
	return json({ invitation: { id: params.id, email: sent.email, role: sent.role, expiresAt: sent.expiresAt.toISOString() }, mailed });
};
