import { describe, expect, it } from 'vitest';
import { ConfigError, loadConfig } from '../../src/lib/server/config';

const base = { DATABASE_URL: 'postgres://curvelore@127.0.0.1:54329/curvelore' };

describe('loadConfig', () => {
	it('accepts a minimal environment and fills defaults', () => {
		const config = loadConfig(base);
		expect(config.DATABASE_URL).toBe(base.DATABASE_URL);
		expect(config.DATABASE_POOL_MAX).toBe(10);
		expect(config.SMTP_URL).toBeUndefined();
	});

	it('treats empty strings as unset', () => {
		const config = loadConfig({ ...base, SMTP_URL: '', MEILISEARCH_URL: '  ' });
		expect(config.SMTP_URL).toBeUndefined();
		expect(config.MEILISEARCH_URL).toBeUndefined();
	});

	it('says which variable is missing', () => {
		expect(() => loadConfig({})).toThrowError(/DATABASE_URL is not set/);
	});

	it('refuses a database URL of the wrong kind and lists every problem at once', () => {
		try {
			loadConfig({ DATABASE_URL: 'mysql://x/y', ORIGIN: 'localhost:3000', DATABASE_POOL_MAX: '2.5' });
			expect.unreachable('loadConfig should have thrown');
		} catch (e) {
			expect(e).toBeInstanceOf(ConfigError);
			const problems = (e as ConfigError).problems;
			expect(problems).toHaveLength(3);
			expect(problems[0]).toMatch(/DATABASE_URL.*postgres:\/\//);
			expect(problems[1]).toMatch(/ORIGIN.*http:\/\//);
			expect(problems[2]).toMatch(/whole number/);
		}
	});

	it('refuses a short AUTH_SECRET', () => {
		expect(() => loadConfig({ ...base, AUTH_SECRET: 'short' })).toThrowError(/at least 32/);
	});

	it('coerces the pool size from its string form', () => {
		expect(loadConfig({ ...base, DATABASE_POOL_MAX: '25' }).DATABASE_POOL_MAX).toBe(25);
	});
});

describe('sign-in link limits', () => {
	it('default to 5 per address and 20 per client, and accept whole numbers from the environment', () => {
		expect(loadConfig(base)).toMatchObject({ SIGN_IN_LINKS_PER_ADDRESS: 5, SIGN_IN_LINKS_PER_CLIENT: 20 });
		expect(loadConfig({ ...base, SIGN_IN_LINKS_PER_ADDRESS: '8', SIGN_IN_LINKS_PER_CLIENT: '200' })).toMatchObject({
			SIGN_IN_LINKS_PER_ADDRESS: 8,
			SIGN_IN_LINKS_PER_CLIENT: 200
		});
	});

	it('refuses zero and fractions with the variable named', () => {
		expect(() => loadConfig({ ...base, SIGN_IN_LINKS_PER_ADDRESS: '0' })).toThrowError(/SIGN_IN_LINKS_PER_ADDRESS/);
		expect(() => loadConfig({ ...base, SIGN_IN_LINKS_PER_CLIENT: '2.5' })).toThrowError(/SIGN_IN_LINKS_PER_CLIENT/);
	});
});

describe('invitation mail limits', () => {
	it('default to a minute between mails of one invitation, 5 resends a day and 50 mails per organisation an hour', () => {
		expect(loadConfig(base)).toMatchObject({ INVITATION_RESEND_INTERVAL_SECONDS: 60, INVITATION_RESENDS_PER_DAY: 5, INVITATION_MAILS_PER_ORG_PER_HOUR: 50 });
		expect(
			loadConfig({ ...base, INVITATION_RESEND_INTERVAL_SECONDS: '0', INVITATION_RESENDS_PER_DAY: '10', INVITATION_MAILS_PER_ORG_PER_HOUR: '200' })
		).toMatchObject({ INVITATION_RESEND_INTERVAL_SECONDS: 0, INVITATION_RESENDS_PER_DAY: 10, INVITATION_MAILS_PER_ORG_PER_HOUR: 200 });
	});

	it('refuses negative, zero counts and fractions with the variable named', () => {
		expect(() => loadConfig({ ...base, INVITATION_RESEND_INTERVAL_SECONDS: '-1' })).toThrowError(/INVITATION_RESEND_INTERVAL_SECONDS/);
		expect(() => loadConfig({ ...base, INVITATION_RESENDS_PER_DAY: '0' })).toThrowError(/INVITATION_RESENDS_PER_DAY/);
		expect(() => loadConfig({ ...base, INVITATION_MAILS_PER_ORG_PER_HOUR: '1.5' })).toThrowError(/INVITATION_MAILS_PER_ORG_PER_HOUR/);
	});
});
