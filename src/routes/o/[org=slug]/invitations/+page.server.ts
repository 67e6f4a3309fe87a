import { fail } from '@sveltejs/kit';
import { z } from 'zod';
import { requireMember, requireUser } from '$lib/server/auth/guard';
import { ROLES, ROLE_LABELS } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { config } from '$lib/server/env';
import { sendMail } from '$lib/server/mail/send';
import { describeLimits, invitationMailLimits, inviteWithinLimits, resendWithinLimits } from '$lib/server/orgs/invitation-limits';
import { invitationMail } from '$lib/server/orgs/invitation-mail';
import { listPendingInvitations, revokeInvitation } from '$lib/server/orgs/invitations';
import { invitationCreate, invitationRef } from '$lib/schemas/orgs';
import type { Actions, PageServerLoad } from './$types';

type InviteErrors = Partial<Record<'email' | 'role', string[]>>;

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'invitation:manage');
	return {
		pending: await listPendingInvitations(db, member.orgId),
		roles: ROLES.map((r) => ({ value: r, label: ROLE_LABELS[r] })),
		limits: describeLimits(invitationMailLimits(config()))
	};
};

const linkFor = (origin: string, token: string) => `${origin}/invite/${token}`;

export const actions: Actions = {
	invite: async ({ params, request, url }) => {
		const member = await requireMember(params.org, 'invitation:manage');
		const user = await requireUser();
		const form = await request.formData();
		const values = { email: String(form.get('email') ?? '').slice(0, 300), role: String(form.get('role') ?? '') };
		const parsed = invitationCreate.safeParse(values);
		if (!parsed.success) return fail(400, { invite: { values, fieldErrors: z.flattenError(parsed.error).fieldErrors as InviteErrors } });
		const result = await db.transaction().execute((trx) =>
			inviteWithinLimits(trx, { orgId: member.orgId, email: parsed.data.email, role: parsed.data.role, invitedBy: member.userId }, invitationMailLimits(config()))
		);
		if (!result.ok) {
			return fail(result.code === 'rate_limited' ? 429 : 409, { invite: { values, fieldErrors: { email: [result.message] } as InviteErrors } });
		}
		const mailed = await sendMail(
			parsed.data.email,
			invitationMail({ url: linkFor(url.origin, result.token), orgName: member.orgName, role: parsed.data.role, inviter: user.name ?? user.email, expiresAt: result.expiresAt })
		);
		return {
			notice: mailed
				? `Invitation sent to ${parsed.data.email}.`
				: `Invitation saved, but the e-mail to ${parsed.data.email} could not be sent. Try “Resend” in a minute.`
		};
	},
	resend: async ({ params, request, url }) => {
		const member = await requireMember(params.org, 'invitation:manage');
		const user = await requireUser();
		const parsed = invitationRef.safeParse({ id: (await request.formData()).get('id') });
		if (!parsed.success) return fail(400, { notice: 'That invitation no longer exists.' });
		const sent = await db.transaction().execute((trx) =>
			resendWithinLimits(trx, { orgId: member.orgId, id: parsed.data.id, actorId: member.userId }, invitationMailLimits(config()))
		);
		if (!sent.ok) {
			// Shown beside the invitation's own Resend button (and, for the not-pending case, on top).
			return fail(sent.code === 'rate_limited' ? 429 : 404, { notice: sent.message, invitationId: parsed.data.id });
		}
		const mailed = await sendMail(
			sent.email,
			invitationMail({ url: linkFor(url.origin, sent.token), orgName: member.orgName, role: sent.role, inviter: user.name ?? user.email, expiresAt: sent.expiresAt })
		);
		return { notice: mailed ? `A new link was sent to ${sent.email}; the old one no longer works.` : `The e-mail to ${sent.email} could not be sent. Try again in a minute.` };
	},
	revoke: async ({ params, request }) => {
		const member = await requireMember(params.org, 'invitation:manage');
		const parsed = invitationRef.safeParse({ id: (await request.formData()).get('id') });
		if (!parsed.success) return fail(400, { notice: 'That invitation no longer exists.' });
		const done = await db.transaction().execute((trx) => revokeInvitation(trx, { orgId: member.orgId, id: parsed.data.id, actorId: member.userId }));
		if (!done) return fail(404, { notice: 'That invitation is no longer pending.' });
		return { notice: 'Invitation revoked; its link no longer works.' };
	}
};
