import { SENT_TO_COOKIE } from '$lib/server/auth/cookies';
import { config } from '$lib/server/env';
import { devMailboxUrl } from '$lib/server/mail/mailbox';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ cookies }) => {
	return { sentTo: cookies.get(SENT_TO_COOKIE) ?? null, localMailbox: devMailboxUrl(config()) !== undefined };
};
