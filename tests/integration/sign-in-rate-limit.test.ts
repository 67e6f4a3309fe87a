import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { admitSignInRequest, SIGN_IN_LIMITS, signInLimits } from '../../src/lib/server/auth/rate-limit';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());
beforeEach(() => truncateAll(db));

const t0 = new Date('2026-12-01T10:00:00Z');
const at = (minutes: number) => new Date(t0.getTime() + minutes * 60_000);

describe('sign-in link rate limit (stored in Postgres)', () => {
	it('allows five links per address in 15 minutes, then names the wait until the oldest expires', async () => {
		expect(SIGN_IN_LIMITS.address).toEqual({ max: 5, windowMinutes: 15 });
		for (let i = 0; i < 5; i++) {
			expect(await admitSignInRequest(db, { email: 'tech@lab.example', client: `10.0.0.${i}`, now: at(i) })).toEqual({ allowed: true });
		}
		// Oldest request at t0 leaves the 15-minute window at t0+15; asked at t0+5 that is 10 minutes away.
		expect(await admitSignInRequest(db, { email: 'TECH@lab.example ', client: '10.0.0.9', now: at(5) })).toEqual({
			allowed: false,
			scope: 'address',
			retryAfterMinutes: 10
		});
		// Refused requests are not counted, so the wait does not grow.
		expect(await admitSignInRequest(db, { email: 'tech@lab.example', client: '10.0.0.9', now: at(14) })).toMatchObject({
			allowed: false,
			retryAfterMinutes: 1
		});
		expect(await admitSignInRequest(db, { email: 'tech@lab.example', client: '10.0.0.9', now: at(15.01) })).toEqual({ allowed: true });
		// Another address is unaffected.
		expect(await admitSignInRequest(db, { email: 'other@lab.example', client: '10.0.0.9', now: at(5) })).toEqual({ allowed: true });
	});

	it('allows twenty links per client address across many e-mail addresses, then refuses that client only', async () => {
		expect(SIGN_IN_LIMITS.client).toEqual({ max: 20, windowMinutes: 15 });
		for (let i = 0; i < 20; i++) {
			expect(await admitSignInRequest(db, { email: `p${i}@lab.example`, client: '192.0.2.7', now: at(0) })).toEqual({ allowed: true });
		}
		expect(await admitSignInRequest(db, { email: 'p99@lab.example', client: '192.0.2.7', now: at(2) })).toEqual({
			allowed: false,
			scope: 'client',
			retryAfterMinutes: 13
		});
		expect(await admitSignInRequest(db, { email: 'p99@lab.example', client: '192.0.2.8', now: at(2) })).toEqual({ allowed: true });
	});

	it('stores hashes, not addresses', async () => {
		await admitSignInRequest(db, { email: 'private@lab.example', client: '198.51.100.1', now: t0 });
		const rows = await db.selectFrom('signInRequest').select(['scope', 'keyHash']).execute();
		expect(rows).toHaveLength(2);
		for (const row of rows) {
			expect(row.keyHash).toMatch(/^[0-9a-f]{64}$/);
			expect(row.keyHash).not.toContain('private');
		}
	});

	it('lets exactly five of ten simultaneous requests for one address through', async () => {
		// Ten requests at once, as from several app instances: the advisory locks serialise them.
		const results = await Promise.all(
			Array.from({ length: 10 }, (_, i) => admitSignInRequest(db, { email: 'race@lab.example', client: `203.0.113.${i}`, now: t0 }))
		);
		expect(results.filter((r) => r.allowed)).toHaveLength(5);
	});

	it('forgets requests older than the window', async () => {
		await admitSignInRequest(db, { email: 'old@lab.example', client: '198.51.100.2', now: t0 });
		await admitSignInRequest(db, { email: 'new@lab.example', client: '198.51.100.3', now: at(30) });
		const { n } = await db
			.selectFrom('signInRequest')
			.select((eb) => eb.fn.countAll<string>().as('n'))
			.executeTakeFirstOrThrow();
		expect(Number(n)).toBe(2);
	});

	it('applies configured counts in the same 15-minute windows', async () => {
		const limits = signInLimits({ SIGN_IN_LINKS_PER_ADDRESS: 2, SIGN_IN_LINKS_PER_CLIENT: 50 });
		expect(limits.address).toEqual({ max: 2, windowMinutes: 15 });
		for (let i = 0; i < 2; i++) {
			expect(await admitSignInRequest(db, { email: 'cfg@lab.example', client: '198.51.100.9', now: at(i) }, limits)).toEqual({ allowed: true });
		}
		expect(await admitSignInRequest(db, { email: 'cfg@lab.example', client: '198.51.100.9', now: at(3) }, limits)).toMatchObject({
			allowed: false,
			scope: 'address',
			retryAfterMinutes: 12
		});
	});
});
