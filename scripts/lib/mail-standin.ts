/**
 * The local stand-in for a mail relay: a real SMTP server (the `smtp-server` package) on loopback
 * that accepts any message and keeps the most recent ones in memory, and a small JSON API to read
 * them. `npm start` and `npm test` run it when no SMTP_URL is configured; the app's developer
 * mailbox page reads the API.
 */
import { createServer as createHttpServer, type Server as HttpServer } from 'node:http';
import type { AddressInfo } from 'node:net';
import { SMTPServer } from 'smtp-server';
import { parseMail } from './mime';

export interface StoredMessage {
	id: string;
	receivedAt: string;
	/** SMTP envelope sender and recipients (what the relay was asked to deliver). */
	envelope: { from: string | null; to: string[] };
	from: string;
	to: string[];
	subject: string;
	text: string | null;
	html: string | null;
	links: string[];
	size: number;
}

export interface MailStandinOptions {
	host?: string;
	smtpPort?: number;
	httpPort?: number;
	/** Messages kept; the oldest are dropped beyond this. */
	capacity?: number;
	/** Largest message accepted, in bytes. */
	maxMessageBytes?: number;
}

export interface MailStandin {
	smtpPort: number;
	httpPort: number;
	messages: () => readonly StoredMessage[];
	close: () => Promise<void>;
}

export async function startMailStandin(options: MailStandinOptions = {}): Promise<MailStandin> {
	const host = options.host ?? '127.0.0.1';
	const capacity = options.capacity ?? 200;
	const maxMessageBytes = options.maxMessageBytes ?? 2 * 1024 * 1024;
	let store: StoredMessage[] = [];
	let counter = 0;

	const smtp = new SMTPServer({
		// Auth.js's Nodemailer provider sends no credentials, and nodemailer would try STARTTLS
		// with a certificate we do not have: advertise neither.
		disabledCommands: ['AUTH', 'STARTTLS'],
		authOptional: true,
		size: maxMessageBytes,
		logger: false,
		banner: 'Curvelore local mail stand-in',
		onData(stream, session, callback) {
			const chunks: Buffer[] = [];
			let size = 0;
			stream.on('data', (chunk: Buffer) => {
				size += chunk.length;
				if (size <= maxMessageBytes) chunks.push(chunk);
			});
			stream.on('error', callback);
			stream.on('end', () => {
				if (stream.sizeExceeded || size > maxMessageBytes) {
					const err = Object.assign(new Error('Message too large for the local mail stand-in'), { responseCode: 552 });
					return callback(err);
				}
				try {
					const parsed = parseMail(Buffer.concat(chunks).toString('utf8'));
					counter += 1;
					store.push({
						id: `${Date.now().toString(36)}-${counter}`,
						receivedAt: new Date().toISOString(),
						envelope: {
							from: session.envelope.mailFrom ? session.envelope.mailFrom.address : null,
							to: session.envelope.rcptTo.map((r) => r.address)
						},
						from: parsed.from,
						to: parsed.to,
						subject: parsed.subject,
						text: parsed.text,
						html: parsed.html,
						links: parsed.links,
						size
					});
					if (store.length > capacity) store = store.slice(store.length - capacity);
					callback();
				} catch (e) {
					callback(e instanceof Error ? e : new Error(String(e)));
				}
			});
		}
	});

	const http: HttpServer = createHttpServer((req, res) => {
		const url = new URL(req.url ?? '/', 'http://stand-in');
		const send = (status: number, body: unknown) => {
			res.writeHead(status, { 'content-type': 'application/json; charset=utf-8', 'cache-control': 'no-store' });
			res.end(JSON.stringify(body));
		};
		const path = url.pathname.replace(/\/+$/, '') || '/';
		if (req.method === 'GET' && path === '/health') return send(200, { status: 'ok', messages: store.length });
		if (path === '/messages') {
			if (req.method === 'GET') {
				const to = url.searchParams.get('to')?.toLowerCase();
				const list = [...store].reverse().filter((m) => !to || m.envelope.to.some((a) => a.toLowerCase() === to));
				return send(200, { messages: list });
			}
			if (req.method === 'DELETE') {
				store = [];
				return send(200, { deleted: true });
			}
		}
		const one = /^\/messages\/([A-Za-z0-9-]{1,64})$/.exec(path);
		if (one && req.method === 'GET') {
			const found = store.find((m) => m.id === one[1]);
			return found ? send(200, found) : send(404, { error: { code: 'not_found', message: 'No such message.' } });
		}
		send(404, { error: { code: 'not_found', message: 'Unknown endpoint.' } });
	});

	await new Promise<void>((resolve, reject) => {
		smtp.once('error', reject);
		smtp.listen(options.smtpPort ?? 0, host, () => resolve());
	});
	await new Promise<void>((resolve, reject) => {
		http.once('error', reject);
		http.listen(options.httpPort ?? 0, host, () => resolve());
	});
	smtp.on('error', (e) => console.error('SMTP stand-in error:', e.message));

	const smtpAddress = smtp.server.address() as AddressInfo;
	const httpAddress = http.address() as AddressInfo;
	return {
		smtpPort: smtpAddress.port,
		httpPort: httpAddress.port,
		messages: () => store,
		close: async () => {
			await new Promise<void>((resolve) => http.close(() => resolve()));
			await new Promise<void>((resolve) => smtp.close(() => resolve()));
		}
	};
}
