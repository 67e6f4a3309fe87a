import { SIGN_IN_LINK_MINUTES } from '../../../auth';
import { SENT_TO_COOKIE } from '$lib/server/auth/cookies';
import { config } from '$lib/server/env';
import { devMailboxUrl } from '$lib/server/mail/mailbox';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ cookies }) => {
	return {
		sentTo: cookies.get(SENT_TO_COOKIE) ?? null,
		linkMinutes: SIGN_IN_LINK_MINUTES,
		localMailbox: devMailboxUrl(config()) !== undefined
	};
};
