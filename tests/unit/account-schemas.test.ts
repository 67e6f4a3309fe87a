import { describe, expect, it } from 'vitest';
import { profileUpdate, signInRequest } from '../../src/lib/schemas/account';
import { describeValidity, signInMail } from '../../src/lib/server/mail/sign-in-mail';

describe('signInRequest', () => {
	it('accepts an address, trimmed and lower-cased as Auth.js stores it', () => {
		expect(signInRequest.parse({ email: '  Ilse.Admin@Fernhollow.Example ' }).email).toBe('ilse.admin@fernhollow.example');
	});

	it.each([[''], ['   '], ['not-an-address'], ['two@@at.example'], ['a@b.example, c@d.example'], [`${'x'.repeat(250)}@a.example`]])(
		'refuses %j with a message for the field',
		(email) => {
			const r = signInRequest.safeParse({ email });
			expect(r.success).toBe(false);
			if (!r.success) expect(r.error.issues[0].path).toEqual(['email']);
		}
	);
});

describe('profileUpdate', () => {
	it('collapses white space and keeps 1–80 characters', () => {
		expect(profileUpdate.parse({ name: '  Ilse   Marrow ' }).name).toBe('Ilse Marrow');
		expect(profileUpdate.parse({ name: 'x'.repeat(80) }).name).toHaveLength(80);
	});
	it.each([[''], ['   '], ['x'.repeat(81)], ['bad\u0007bell']])('refuses %j', (name) => {
		expect(profileUpdate.safeParse({ name }).success).toBe(false);
	});
});

describe('the sign-in e-mail', () => {
	const now = new Date('2026-12-01T10:00:00Z');
	const url = 'http://localhost:3000/auth/callback/nodemailer?callbackUrl=%2F&token=abc&email=a%40b.example';

	it('carries the product name, the exact link, the expiry and what to do if it was not you', () => {
		const mail = signInMail({ url, host: 'localhost:3000', expires: new Date(now.getTime() + 30 * 60_000), now });
		expect(mail.subject).toBe('Sign in to Curvelore');
		expect(mail.text).toContain(url);
		expect(mail.text).toContain('expires in 30 minutes');
		expect(mail.text).toMatch(/did not ask to sign in.*ignore this e-mail/);
		// In HTML the & of the query string must be escaped as &amp; (HTML 5 attribute syntax).
		expect(mail.html).toContain(url.replace(/&/g, '&amp;'));
		expect(mail.html).not.toMatch(/<script/i);
	});

	it('states the validity in words', () => {
		expect(describeValidity(new Date(now.getTime() + 60 * 60_000), now)).toBe('1 hour');
		expect(describeValidity(new Date(now.getTime() + 24 * 60 * 60_000), now)).toBe('24 hours');
		expect(describeValidity(new Date(now.getTime() + 60_000), now)).toBe('1 minute');
		expect(describeValidity(new Date(now.getTime() + 90 * 60_000), now)).toBe('90 minutes');
	});
});
