import { error, fail } from '@sveltejs/kit';
import { config } from '$lib/server/env';
import { devMailboxUrl, listMailboxMessages, MailboxUnavailable } from '$lib/server/mail/mailbox';
import type { Actions, PageServerLoad } from './$types';

/** The page exists only while mail goes to the local stand-in; with a real relay it is a 404. */
function mailboxOr404(): string {
	const url = devMailboxUrl(config());
	if (!url) error(404);
	return url;
}

export const load: PageServerLoad = async () => {
	const base = mailboxOr404();
	try {
		const messages = await listMailboxMessages(base);
		return {
			available: true,
			messages: messages.slice(0, 100).map((m) => ({
				id: m.id,
				receivedAt: m.receivedAt,
				to: m.envelope.to.length ? m.envelope.to : m.to,
				subject: m.subject,
				firstLink: m.links[0] ?? null
			}))
		};
	} catch (e) {
		if (e instanceof MailboxUnavailable) return { available: false, messages: [] };
		throw e;
	}
};

export const actions: Actions = {
	clear: async () => {
		const base = mailboxOr404();
		const res = await fetch(`${base}/messages`, { method: 'DELETE', signal: AbortSignal.timeout(3000) }).catch(() => null);
		if (!res?.ok) return fail(503, { clearFailed: true });
		return { cleared: true };
	}
};
