import { describe, expect, it } from 'vitest';
import { invitationMail } from './invitation-mail';

describe('invitationMail', () => {
	const base = {
		url: 'http://localhost:3000/invite/cli_abc',
		orgName: 'Bench <Three> & Co',
		role: 'contributor' as const,
		inviter: 'Ilse Marrow',
		expiresAt: new Date('2026-12-08T19:00:00Z')
	};

	it('says who invites, where, with what role, until when, and carries the link in both parts', () => {
		const mail = invitationMail(base);
		expect(mail.subject).toBe('You are invited to Bench <Three> & Co on Curvelore');
		expect(mail.text).toContain('Ilse Marrow invites you to join Bench <Three> & Co on Curvelore as contributor.');
		expect(mail.text).toContain(base.url);
		expect(mail.text).toContain('until 2026-12-08');
		expect(mail.html).toContain(`href="${base.url}"`);
	});

	it('escapes names in the HTML part, so an organisation name cannot inject markup', () => {
		const mail = invitationMail({ ...base, inviter: '<script>x</script>' });
		expect(mail.html).toContain('Bench &lt;Three&gt; &amp; Co');
		expect(mail.html).not.toContain('<script>');
		expect(mail.html).toContain('&lt;script&gt;x&lt;/script&gt;');
	});
});
