import { KyselyAdapter } from '@auth/kysely-adapter';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { adapterDb } from '../../src/lib/server/auth/tables';
import { ensureUser, findUserByEmail, findUserById, updateDisplayName } from '../../src/lib/server/auth/users';
import { DEMO_USERS, seedDemo } from '../../src/lib/server/demo/seed';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
const adapter = KyselyAdapter(adapterDb(db));
afterAll(() => db.destroy());
beforeEach(() => truncateAll(db));

// The adapter contract these calls exercise is Auth.js's Adapter interface (@auth/core/adapters):
// the e-mail flow is createVerificationToken → useVerificationToken (once) → getUserByEmail or
// createUser → createSession → getSessionAndUser on every request → deleteSession on sign-out.
describe('Auth.js Kysely adapter on the real tables', () => {
	it('creates a user and finds it by id and by address', async () => {
		const created = await adapter.createUser!({ id: '', email: 'bench.tech@lab.example', emailVerified: null });
		expect(created.id).toMatch(/^[0-9a-f-]{36}$/);
		expect(await adapter.getUser!(created.id)).toMatchObject({ email: 'bench.tech@lab.example', emailVerified: null });
		expect(await adapter.getUserByEmail!('bench.tech@lab.example')).toMatchObject({ id: created.id });
		expect(await adapter.getUserByEmail!('nobody@lab.example')).toBeNull();
		const row = await findUserById(db, created.id);
		expect(row?.createdAt).toBeInstanceOf(Date);
	});

	it('hands out a verification token exactly once', async () => {
		const expires = new Date(Date.now() + 30 * 60_000);
		await adapter.createVerificationToken!({ identifier: 'a@lab.example', token: 'hashed-token-1', expires });
		const used = await adapter.useVerificationToken!({ identifier: 'a@lab.example', token: 'hashed-token-1' });
		expect(used).toMatchObject({ identifier: 'a@lab.example', token: 'hashed-token-1' });
		expect(used?.expires.getTime()).toBe(expires.getTime());
		// A second click on the same link must find nothing: links are single-use.
		expect(await adapter.useVerificationToken!({ identifier: 'a@lab.example', token: 'hashed-token-1' })).toBeNull();
		// Another address cannot use someone else's token.
		await adapter.createVerificationToken!({ identifier: 'b@lab.example', token: 'hashed-token-2', expires });
		expect(await adapter.useVerificationToken!({ identifier: 'a@lab.example', token: 'hashed-token-2' })).toBeNull();
	});

	it('stores a session, returns it with its user, extends it and deletes it', async () => {
		const user = await adapter.createUser!({ id: '', email: 's@lab.example', emailVerified: new Date() });
		const expires = new Date(Date.now() + 86_400_000);
		await adapter.createSession!({ sessionToken: 'session-abc', userId: user.id, expires });
		const found = await adapter.getSessionAndUser!('session-abc');
		expect(found?.user).toMatchObject({ id: user.id, email: 's@lab.example' });
		expect(found?.session.expires.getTime()).toBe(expires.getTime());

		const later = new Date(expires.getTime() + 86_400_000);
		await adapter.updateSession!({ sessionToken: 'session-abc', expires: later });
		expect((await adapter.getSessionAndUser!('session-abc'))?.session.expires.getTime()).toBe(later.getTime());

		await adapter.deleteSession!('session-abc');
		expect(await adapter.getSessionAndUser!('session-abc')).toBeNull();
	});

	it('removes a deleted user’s sessions with it', async () => {
		const user = await adapter.createUser!({ id: '', email: 'gone@lab.example', emailVerified: null });
		await adapter.createSession!({ sessionToken: 'session-gone', userId: user.id, expires: new Date(Date.now() + 60_000) });
		await adapter.deleteUser!(user.id);
		expect(await adapter.getSessionAndUser!('session-gone')).toBeNull();
	});
});

describe('user queries', () => {
	it('finds a user by address regardless of case and spacing', async () => {
		const user = await ensureUser(db, { email: 'Mixed.Case@Lab.Example ' });
		expect(user.email).toBe('mixed.case@lab.example');
		expect((await findUserByEmail(db, '  MIXED.case@lab.example'))?.id).toBe(user.id);
	});

	it('ensureUser returns the existing row instead of creating a second one', async () => {
		const a = await ensureUser(db, { email: 'once@lab.example', name: 'First' });
		const b = await ensureUser(db, { email: 'once@lab.example', name: 'Second' });
		expect(b.id).toBe(a.id);
		expect(b.name).toBe('First');
	});

	it('updates the display name, and the database refuses one over 80 characters', async () => {
		const user = await ensureUser(db, { email: 'named@lab.example' });
		expect(user.name).toBeNull();
		expect((await updateDisplayName(db, user.id, 'Bench Two'))?.name).toBe('Bench Two');
		expect((await findUserById(db, user.id))?.name).toBe('Bench Two');
		await expect(updateDisplayName(db, user.id, 'x'.repeat(81))).rejects.toMatchObject({ code: '23514' });
		expect(await updateDisplayName(db, '00000000-0000-0000-0000-000000000000', 'Nobody')).toBeUndefined();
	});

	it('refuses a second user with the same address at the database level', async () => {
		await ensureUser(db, { email: 'dup@lab.example' });
		await expect(adapter.createUser!({ id: '', email: 'dup@lab.example', emailVerified: null })).rejects.toMatchObject({ code: '23505' });
	});
});

describe('demo users', () => {
	it('are seeded once, at reserved .example addresses, one per role', async () => {
		expect(await seedDemo(db)).toBe(true);
		// RFC 2606 reserves the .example top-level domain: such addresses can never be delivered.
		for (const demo of DEMO_USERS) {
			expect(demo.email).toMatch(/\.example$/);
			expect(await findUserByEmail(db, demo.email)).toMatchObject({ name: demo.name });
		}
		expect(new Set(DEMO_USERS.map((u) => u.role))).toEqual(new Set(['admin', 'author', 'contributor']));
		expect(await seedDemo(db)).toBe(false);
	});
});
