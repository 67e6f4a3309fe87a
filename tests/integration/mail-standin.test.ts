import net from 'node:net';
import nodemailer from 'nodemailer';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { type MailStandin, type StoredMessage, startMailStandin } from '../../scripts/lib/mail-standin';
import { signInMail } from '../../src/lib/server/mail/sign-in-mail';

let standin: MailStandin;
let api: string;

beforeAll(async () => {
	standin = await startMailStandin({ capacity: 5 });
	api = `http://127.0.0.1:${standin.httpPort}`;
});
afterAll(() => standin.close());
beforeEach(async () => {
	await fetch(`${api}/messages`, { method: 'DELETE' });
});

const transport = () => nodemailer.createTransport(`smtp://127.0.0.1:${standin.smtpPort}`);

async function messages(query = ''): Promise<StoredMessage[]> {
	const res = await fetch(`${api}/messages${query}`);
	expect(res.status).toBe(200);
	return ((await res.json()) as { messages: StoredMessage[] }).messages;
}

/** Reads the server's greeting and EHLO reply over a raw socket (RFC 5321 §4.1.1.1). */
function ehloReply(port: number): Promise<string> {
	return new Promise((resolve, reject) => {
		const socket = net.connect(port, '127.0.0.1');
		let buffer = '';
		let sent = false;
		socket.setEncoding('utf8');
		socket.on('data', (chunk: string) => {
			buffer += chunk;
			if (!sent && /^220 /m.test(buffer)) {
				sent = true;
				socket.write('EHLO test.example\r\n');
			}
			// The last line of a multi-line reply has a space after the code: "250 ...".
			if (sent && /^250 .*\r\n$/m.test(buffer.split('\r\n').slice(-2).join('\r\n'))) {
				socket.end('QUIT\r\n');
				resolve(buffer);
			}
		});
		socket.on('error', reject);
	});
}

describe('local mail stand-in', () => {
	it('answers health on its HTTP API', async () => {
		const res = await fetch(`${api}/health`);
		expect(res.status).toBe(200);
		expect(await res.json()).toMatchObject({ status: 'ok' });
	});

	it('advertises neither AUTH nor STARTTLS, so credential-less senders get through', async () => {
		const reply = await ehloReply(standin.smtpPort);
		expect(reply).toMatch(/^250[- ]/m);
		expect(reply).not.toMatch(/^250[- ]AUTH/m);
		expect(reply).not.toMatch(/^250[- ]STARTTLS/m);
	});

	it('receives a multipart message sent by nodemailer over real SMTP and returns it decoded', async () => {
		const info = await transport().sendMail({
			from: 'Curvelore <sign-in@curvelore.invalid>',
			to: 'ilse.admin@fernhollow.example',
			subject: 'Prüfung — Ω and µF',
			text: 'Line one\nA long link: http://localhost:3000/auth/callback/nodemailer?token=' + 'a'.repeat(120) + '&email=x%40y.example\n',
			html: '<p>Hello <a href="http://localhost:3000/x?a=1&amp;b=2">there</a></p>'
		});
		expect(info.rejected).toEqual([]);
		const [message] = await messages();
		expect(message.envelope).toEqual({ from: 'sign-in@curvelore.invalid', to: ['ilse.admin@fernhollow.example'] });
		expect(message.to).toEqual(['ilse.admin@fernhollow.example']);
		// Non-ASCII subjects travel as RFC 2047 encoded words and must come back intact.
		expect(message.subject).toBe('Prüfung — Ω and µF');
		// Quoted-printable soft line breaks (RFC 2045 §6.7) must be undone so the long link is whole.
		expect(message.links[0]).toBe('http://localhost:3000/auth/callback/nodemailer?token=' + 'a'.repeat(120) + '&email=x%40y.example');
		expect(message.text).toContain('Line one\n');
		expect(message.html).toContain('<a href="http://localhost:3000/x?a=1&amp;b=2">');

		const one = await fetch(`${api}/messages/${message.id}`);
		expect(one.status).toBe(200);
		expect(await one.json()).toMatchObject({ id: message.id, subject: message.subject });
		expect((await fetch(`${api}/messages/nope-0`)).status).toBe(404);
	});

	it('keeps the sign-in e-mail link exactly as sent', async () => {
		const now = new Date();
		const url = 'http://localhost:3000/auth/callback/nodemailer?callbackUrl=http%3A%2F%2Flocalhost%3A3000%2Fprofile&token=0123456789abcdef&email=pim.contributor%40fernhollow.example';
		const mail = signInMail({ url, host: 'localhost:3000', expires: new Date(now.getTime() + 30 * 60_000), now });
		await transport().sendMail({ from: 'a@curvelore.invalid', to: 'pim.contributor@fernhollow.example', ...mail });
		const [message] = await messages();
		expect(message.subject).toBe('Sign in to Curvelore');
		expect(message.links[0]).toBe(url);
	});

	it('lists newest first, filters by recipient, keeps a bounded number and empties on DELETE', async () => {
		for (let i = 0; i < 7; i++) {
			await transport().sendMail({ from: 'a@curvelore.invalid', to: i % 2 ? 'odd@lab.example' : 'even@lab.example', subject: `n${i}`, text: 'x' });
		}
		const all = await messages();
		expect(all.map((m) => m.subject)).toEqual(['n6', 'n5', 'n4', 'n3', 'n2']);
		expect((await messages('?to=odd@lab.example')).map((m) => m.subject)).toEqual(['n5', 'n3']);
		expect((await fetch(`${api}/messages`, { method: 'DELETE' })).status).toBe(200);
		expect(await messages()).toEqual([]);
	});
});
