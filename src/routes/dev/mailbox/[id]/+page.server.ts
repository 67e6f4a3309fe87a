import { error } from '@sveltejs/kit';
import { config } from '$lib/server/env';
import { devMailboxUrl, getMailboxMessage } from '$lib/server/mail/mailbox';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params }) => {
	const base = devMailboxUrl(config());
	if (!base || !/^[A-Za-z0-9-]{1,64}$/.test(params.id)) error(404);
	const message = await getMailboxMessage(base, params.id);
	if (!message) error(404);
	return { message };
};
