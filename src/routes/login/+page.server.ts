import { fail, redirect } from '@sveltejs/kit';
import { z } from 'zod';
import { requestSignInLink } from '../../auth';
import { SENT_TO_COOKIE } from '$lib/server/auth/cookies';
import { currentPrincipal } from '$lib/server/auth/guard';
import { admitSignInRequest, type RateDecision, signInLimits } from '$lib/server/auth/rate-limit';
import { safeRedirectPath } from '$lib/server/auth/redirect';
import { db } from '$lib/server/db';
import { config } from '$lib/server/env';
import { devMailboxUrl } from '$lib/server/mail/mailbox';
import { signInRequest } from '$lib/schemas/account';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const redirectTo = safeRedirectPath(event.url.searchParams.get('redirectTo'));
	if (await currentPrincipal(event)) redirect(303, redirectTo);
	return { redirectTo, localMailbox: devMailboxUrl(config()) !== undefined };
};

function limitMessage(decision: Extract<RateDecision, { allowed: false }>): string {
	const wait = `${decision.retryAfterMinutes} minute${decision.retryAfterMinutes === 1 ? '' : 's'}`;
	return decision.scope === 'address'
		? `Too many sign-in links requested for this address; try again in ${wait}.`
		: `Too many sign-in links requested from your network; try again in ${wait}.`;
}

export const actions: Actions = {
	default: async (event) => {
		const form = await event.request.formData();
		const raw = { email: String(form.get('email') ?? ''), redirectTo: String(form.get('redirectTo') ?? '') };
		const parsed = signInRequest.safeParse(raw);
		if (!parsed.success) {
			return fail(400, { values: { email: raw.email }, fieldErrors: z.flattenError(parsed.error).fieldErrors });
		}
		const { email } = parsed.data;
		const redirectTo = safeRedirectPath(parsed.data.redirectTo);

		// Behind a proxy, adapter-node's ADDRESS_HEADER / XFF_DEPTH make this the real client.
		const decision = await admitSignInRequest(db, { email, client: event.getClientAddress() }, signInLimits(config()));
		if (!decision.allowed) {
			return fail(429, { values: { email }, fieldErrors: { email: [limitMessage(decision)] } });
		}
		const result = await requestSignInLink(event, email, redirectTo);
		if (!result.sent) {
			return fail(503, {
				values: { email },
				fieldErrors: { email: ['The sign-in e-mail could not be sent just now. Try again in a minute.'] }
			});
		}
		event.cookies.set(SENT_TO_COOKIE, email, {
			path: '/login',
			httpOnly: true,
			sameSite: 'lax',
			maxAge: 15 * 60
		});
		redirect(303, '/login/check-email');
	}
};
