import { z } from 'zod';

const LOOPBACK = new Set(['127.0.0.1', 'localhost', '[::1]', '::1']);

function isLoopback(url: string): boolean {
	try {
		return LOOPBACK.has(new URL(url).hostname);
	} catch {
		return false;
	}
}

/**
 * Where the developer mailbox page reads mail from, or undefined when the page must not exist.
 * It exists only while mail goes to the local stand-in: DEV_MAILBOX_URL is set (the start and test
 * commands set it only when they start the stand-in) and both it and SMTP_URL point at this
 * machine's loopback. A real relay in SMTP_URL therefore always hides the page, even if a stale
 * DEV_MAILBOX_URL is left in the environment. Pure.
 */
export function devMailboxUrl(config: { SMTP_URL?: string; DEV_MAILBOX_URL?: string }): string | undefined {
	const { SMTP_URL, DEV_MAILBOX_URL } = config;
	if (!DEV_MAILBOX_URL || !SMTP_URL) return undefined;
	if (!isLoopback(DEV_MAILBOX_URL) || !isLoopback(SMTP_URL)) return undefined;
	return DEV_MAILBOX_URL.replace(/\/+$/, '');
}

const message = z.object({
	id: z.string(),
	receivedAt: z.string(),
	envelope: z.object({ from: z.string().nullable(), to: z.array(z.string()) }),
	from: z.string(),
	to: z.array(z.string()),
	subject: z.string(),
	text: z.string().nullable(),
	html: z.string().nullable(),
	links: z.array(z.string())
});

export type MailboxMessage = z.infer<typeof message>;

export class MailboxUnavailable extends Error {
	constructor() {
		super('The local mail stand-in is not answering.');
		this.name = 'MailboxUnavailable';
	}
}

async function getJson(url: string): Promise<{ status: number; body: unknown }> {
	let res: Response;
	try {
		res = await fetch(url, { signal: AbortSignal.timeout(3000) });
	} catch {
		throw new MailboxUnavailable();
	}
	return { status: res.status, body: res.status === 200 ? await res.json() : null };
}

/** Captured messages, newest first. */
export async function listMailboxMessages(base: string): Promise<MailboxMessage[]> {
	const { status, body } = await getJson(`${base}/messages`);
	if (status !== 200) throw new MailboxUnavailable();
	return z.object({ messages: z.array(message) }).parse(body).messages;
}

/** One captured message, or undefined when the stand-in no longer has it. */
export async function getMailboxMessage(base: string, id: string): Promise<MailboxMessage | undefined> {
	const { status, body } = await getJson(`${base}/messages/${encodeURIComponent(id)}`);
	if (status === 404) return undefined;
	if (status !== 200) throw new MailboxUnavailable();
	return message.parse(body);
}
