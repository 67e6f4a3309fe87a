import { fail, redirect } from '@sveltejs/kit';
import { currentPrincipal, requireUser } from '$lib/server/auth/guard';
import { ROLE_LABELS } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { acceptInvitation, findInvitationByToken } from '$lib/server/orgs/invitations';
import type { Actions, PageServerLoad } from './$types';

/** "tech.two@example.com" → "t•••••••@example.com": enough to recognise, not to harvest. */
function maskEmail(email: string): string {
	const [local, domain] = email.split('@');
	return `${local.charAt(0)}${'•'.repeat(Math.max(local.length - 1, 1))}@${domain}`;
}

export const load: PageServerLoad = async (event) => {
	// The secret is in the path: keep it out of Referer headers sent to other sites.
	event.setHeaders({ 'referrer-policy': 'no-referrer', 'cache-control': 'no-store' });
	const invitation = await findInvitationByToken(db, event.params.token);
	if (!invitation) return { state: 'unknown' as const };
	const base = { orgName: invitation.orgName, roleLabel: ROLE_LABELS[invitation.role] };
	if (invitation.state !== 'open') return { state: invitation.state, ...base };
	const principal = await currentPrincipal(event);
	if (!principal) {
		return { state: 'sign_in' as const, ...base, email: invitation.email, signInHref: `/login?redirectTo=${encodeURIComponent(event.url.pathname)}` };
	}
	if (principal.user.email.toLowerCase() !== invitation.email) {
		return { state: 'wrong_address' as const, ...base, invited: maskEmail(invitation.email), signedInAs: principal.user.email };
	}
	return { state: 'ready' as const, ...base, email: invitation.email };
};

export const actions: Actions = {
	default: async (event) => {
		const user = await requireUser();
		const result = await db.transaction().execute((trx) =>
			acceptInvitation(trx, { token: event.params.token, userId: user.id, userEmail: user.email })
		);
		if (!result.ok) return fail(result.code === 'unknown' ? 404 : 409, { code: result.code });
		redirect(303, `/o/${result.orgSlug}`);
	}
};
