import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { authenticateApiToken, createApiToken, listActiveOrgTokens, revokeOrgApiToken, revokeOwnApiToken } from '../../src/lib/server/auth/api-tokens';
import { hashSecret } from '../../src/lib/server/auth/secret-token';
import { ensureUser } from '../../src/lib/server/auth/users';
import { DEMO_ORGANISATION, DEMO_USERS, seedDemo } from '../../src/lib/server/demo/seed';
import { listAudit } from '../../src/lib/server/orgs/audit';
import {
	acceptInvitation,
	createInvitation,
	findInvitationByToken,
	INVITATION_VALIDITY_MS,
	listPendingInvitations,
	resendInvitation,
	revokeInvitation
} from '../../src/lib/server/orgs/invitations';
import { changeMemberRole, createOrganisation, LAST_ADMIN_MESSAGE, removeMember } from '../../src/lib/server/orgs/members';
import { deleteMembership, findMembership, insertMembership, listMembers, listOrgsOfUser, touchMembership, updateMemberRole } from '../../src/lib/server/orgs/queries';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());
beforeEach(() => truncateAll(db));


async function twoOrgs() {
	const alice = await ensureUser(db, { email: 'alice@alpha.example.com', name: 'Alice' });
	const bob = await ensureUser(db, { email: 'bob@bravo.example.com', name: 'Bob' });
	const a = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Alpha', slug: 'alpha', creatorId: alice.id })))!;
	const b = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Bravo', slug: 'bravo', creatorId: bob.id })))!;
	return { alice, bob, a, b };
}

const count = async (table: 'organisation' | 'membership' | 'auditLog' | 'invitation') =>
	Number((await db.selectFrom(table).select((eb) => eb.fn.countAll<string>().as('n')).executeTakeFirstOrThrow()).n);

describe('createOrganisation', () => {
	it('makes the creator admin and records it in the audit log', async () => {
		const { alice, a } = await twoOrgs();
		expect((await findMembership(db, a.id, alice.id))?.role).toBe('admin');
		expect((await listAudit(db, a.id)).map((e) => e.action)).toEqual(['org.created']);
	});

	it('writes nothing at all when the slug is taken', async () => {
		const { bob } = await twoOrgs();
		const before = { orgs: await count('organisation'), members: await count('membership'), audit: await count('auditLog') };
		const r = await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Other', slug: 'alpha', creatorId: bob.id }));
		expect(r).toBeUndefined();
		expect({ orgs: await count('organisation'), members: await count('membership'), audit: await count('auditLog') }).toEqual(before);
	});
});

describe('the last-admin rule', () => {
	it('refuses to demote or remove the only admin, and allows it once there is a second', async () => {
		const { alice, a } = await twoOrgs();
		const demote = await db.transaction().execute((trx) => changeMemberRole(trx, { orgId: a.id, actorId: alice.id, userId: alice.id, role: 'author' }));
		expect(demote).toEqual({ ok: false, code: 'last_admin', message: LAST_ADMIN_MESSAGE });
		const remove = await db.transaction().execute((trx) => removeMember(trx, { orgId: a.id, actorId: alice.id, userId: alice.id }));
		expect(remove.ok).toBe(false);
		expect((await findMembership(db, a.id, alice.id))?.role).toBe('admin');

		const carol = await ensureUser(db, { email: 'carol@alpha.example.com' });
		await insertMembership(db, { orgId: a.id, userId: carol.id, role: 'viewer' });
		expect((await db.transaction().execute((trx) => changeMemberRole(trx, { orgId: a.id, actorId: alice.id, userId: carol.id, role: 'admin' }))).ok).toBe(true);
		expect((await db.transaction().execute((trx) => changeMemberRole(trx, { orgId: a.id, actorId: carol.id, userId: alice.id, role: 'author' }))).ok).toBe(true);
		const audit = await listAudit(db, a.id);
		expect(audit[0]).toMatchObject({ action: 'member.role_changed', details: { from: 'admin', to: 'author' } });
	});

	it('holds when two admins demote each other at the same time', async () => {
		const { alice, a } = await twoOrgs();
		const carol = await ensureUser(db, { email: 'carol@alpha.example.com' });
		await insertMembership(db, { orgId: a.id, userId: carol.id, role: 'admin' });
		const results = await Promise.all([
			db.transaction().execute((trx) => changeMemberRole(trx, { orgId: a.id, actorId: alice.id, userId: carol.id, role: 'viewer' })),
			db.transaction().execute((trx) => changeMemberRole(trx, { orgId: a.id, actorId: carol.id, userId: alice.id, role: 'viewer' }))
		]);
		expect(results.filter((r) => r.ok)).toHaveLength(1);
		const admins = (await listMembers(db, a.id)).filter((m) => m.role === 'admin');
		expect(admins).toHaveLength(1);
	});

	it('revokes the removed member’s tokens for that organisation', async () => {
		const { alice, a } = await twoOrgs();
		const dan = await ensureUser(db, { email: 'dan@alpha.example.com' });
		await insertMembership(db, { orgId: a.id, userId: dan.id, role: 'contributor' });
		const t = await db.transaction().execute((trx) => createApiToken(trx, { userId: dan.id, orgId: a.id, name: 'bench', role: 'contributor' }));
		if (!t.ok) throw new Error(t.message);
		await db.transaction().execute((trx) => removeMember(trx, { orgId: a.id, actorId: alice.id, userId: dan.id }));
		expect(await authenticateApiToken(db, t.token)).toBeUndefined();
	});
});

describe('tenant scoping of the queries', () => {
	it("never reads or changes another organisation's rows", async () => {
		const { alice, bob, a, b } = await twoOrgs();
		expect((await listMembers(db, b.id)).map((m) => m.email)).toEqual(['bob@bravo.example.com']);
		expect(await findMembership(db, b.id, alice.id)).toBeUndefined();
		expect(await updateMemberRole(db, b.id, alice.id, 'viewer')).toBe(false);
		expect(await deleteMembership(db, b.id, alice.id)).toBe(false);
		expect((await findMembership(db, a.id, alice.id))?.role).toBe('admin');
		const inv = await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: 'x@example.com', role: 'viewer', invitedBy: alice.id }));
		if (!inv.ok) throw new Error(inv.message);
		expect(await db.transaction().execute((trx) => revokeInvitation(trx, { orgId: b.id, id: inv.id, actorId: bob.id }))).toBe(false);
		expect(await db.transaction().execute((trx) => resendInvitation(trx, { orgId: b.id, id: inv.id, actorId: bob.id }))).toBeUndefined();
		expect(await listPendingInvitations(db, b.id)).toEqual([]);
		expect(await listAudit(db, b.id)).toHaveLength(1);
		expect((await listOrgsOfUser(db, alice.id)).map((o) => o.slug)).toEqual(['alpha']);
		const t = await db.transaction().execute((trx) => createApiToken(trx, { userId: alice.id, orgId: a.id, name: 'bench', role: 'viewer' }));
		if (!t.ok) throw new Error(t.message);
		expect(await listActiveOrgTokens(db, b.id)).toEqual([]);
		expect(await db.transaction().execute((trx) => revokeOrgApiToken(trx, { orgId: b.id, tokenId: t.id, actorId: bob.id }))).toBe(false);
		expect(await authenticateApiToken(db, t.token)).toBeDefined();
		expect(await db.transaction().execute((trx) => revokeOrgApiToken(trx, { orgId: a.id, tokenId: t.id, actorId: alice.id }))).toBe(true);
		expect(await authenticateApiToken(db, t.token)).toBeUndefined();
	});
});

describe('invitations', () => {
	it('store only the hash of the link and accept it once, for the invited address, with the invited role', async () => {
		const { alice, a } = await twoOrgs();
		const inv = await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: 'tech@example.com', role: 'author', invitedBy: alice.id }));
		if (!inv.ok) throw new Error(inv.message);
		const row = await db.selectFrom('invitation').select(['tokenHash']).where('id', '=', inv.id).executeTakeFirstOrThrow();
		expect(row.tokenHash).toBe(hashSecret(inv.token));
		expect(row.tokenHash).not.toContain(inv.token.slice(4, 20));

		const stranger = await ensureUser(db, { email: 'stranger@example.com' });
		const wrong = await db.transaction().execute((trx) => acceptInvitation(trx, { token: inv.token, userId: stranger.id, userEmail: stranger.email }));
		expect(wrong).toEqual({ ok: false, code: 'wrong_address' });
		expect(await findMembership(db, a.id, stranger.id)).toBeUndefined();

		const tech = await ensureUser(db, { email: 'Tech@Example.com' });
		const ok = await db.transaction().execute((trx) => acceptInvitation(trx, { token: inv.token, userId: tech.id, userEmail: 'TECH@example.com' }));
		expect(ok).toMatchObject({ ok: true, role: 'author', orgSlug: 'alpha' });
		expect((await findMembership(db, a.id, tech.id))?.role).toBe('author');
		const reuse = await db.transaction().execute((trx) => acceptInvitation(trx, { token: inv.token, userId: tech.id, userEmail: tech.email }));
		expect(reuse).toEqual({ ok: false, code: 'accepted' });
		expect((await listAudit(db, a.id)).map((e) => e.action)).toContain('member.joined');
	});

	it('expire after 7 days and can then be replaced', async () => {
		const { alice, a } = await twoOrgs();
		const then = new Date('2026-11-01T12:00:00Z');
		const inv = await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: 'late@example.com', role: 'viewer', invitedBy: alice.id, now: then }));
		if (!inv.ok) throw new Error(inv.message);
		expect(inv.expiresAt.getTime() - then.getTime()).toBe(INVITATION_VALIDITY_MS);
		const late = await ensureUser(db, { email: 'late@example.com' });
		const justBefore = new Date(then.getTime() + INVITATION_VALIDITY_MS - 1000);
		expect((await findInvitationByToken(db, inv.token, justBefore))?.state).toBe('open');
		const after = new Date(then.getTime() + INVITATION_VALIDITY_MS + 1000);
		expect(await db.transaction().execute((trx) => acceptInvitation(trx, { token: inv.token, userId: late.id, userEmail: late.email, now: after }))).toEqual({ ok: false, code: 'expired' });
		const again = await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: 'late@example.com', role: 'viewer', invitedBy: alice.id, now: after }));
		expect(again.ok).toBe(true);
	});

	it('refuse a duplicate and an existing member, writing nothing', async () => {
		const { alice, a } = await twoOrgs();
		await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: 'dup@example.com', role: 'viewer', invitedBy: alice.id }));
		const before = { inv: await count('invitation'), audit: await count('auditLog') };
		const dup = await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: 'dup@example.com', role: 'author', invitedBy: alice.id }));
		expect(dup).toMatchObject({ ok: false, code: 'already_invited' });
		const member = await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: 'alice@alpha.example.com', role: 'viewer', invitedBy: alice.id }));
		expect(member).toMatchObject({ ok: false, code: 'already_member' });
		expect({ inv: await count('invitation'), audit: await count('auditLog') }).toEqual(before);
	});

	it('stop working when revoked, and when resent the old link dies', async () => {
		const { alice, a } = await twoOrgs();
		const user = await ensureUser(db, { email: 'resent@example.com' });
		const inv = await db.transaction().execute((trx) => createInvitation(trx, { orgId: a.id, email: user.email, role: 'viewer', invitedBy: alice.id }));
		if (!inv.ok) throw new Error(inv.message);
		const fresh = await db.transaction().execute((trx) => resendInvitation(trx, { orgId: a.id, id: inv.id, actorId: alice.id }));
		expect(fresh).toBeDefined();
		expect(await findInvitationByToken(db, inv.token)).toBeUndefined();
		expect(await db.transaction().execute((trx) => revokeInvitation(trx, { orgId: a.id, id: inv.id, actorId: alice.id }))).toBe(true);
		const r = await db.transaction().execute((trx) => acceptInvitation(trx, { token: fresh!.token, userId: user.id, userEmail: user.email }));
		expect(r).toEqual({ ok: false, code: 'revoked' });
		expect(await db.transaction().execute((trx) => acceptInvitation(trx, { token: 'cli_tampered', userId: user.id, userEmail: user.email }))).toEqual({ ok: false, code: 'unknown' });
	});
});

describe('API tokens', () => {
	it('are refused above the owner’s role and outside their organisations', async () => {
		const { alice, bob, a, b } = await twoOrgs();
		const viewer = await ensureUser(db, { email: 'v@alpha.example.com' });
		await insertMembership(db, { orgId: a.id, userId: viewer.id, role: 'viewer' });
		const high = await db.transaction().execute((trx) => createApiToken(trx, { userId: viewer.id, orgId: a.id, name: 'x', role: 'contributor' }));
		expect(high).toMatchObject({ ok: false, code: 'role_too_high' });
		const foreign = await db.transaction().execute((trx) => createApiToken(trx, { userId: alice.id, orgId: b.id, name: 'x', role: 'viewer' }));
		expect(foreign).toMatchObject({ ok: false, code: 'not_member' });
		expect(await count('auditLog')).toBe(2);
		void bob;
	});

	it('authenticate by hash until revoked, and only their owner may revoke them', async () => {
		const { alice, bob, a } = await twoOrgs();
		const t = await db.transaction().execute((trx) => createApiToken(trx, { userId: alice.id, orgId: a.id, name: 'bench pc', role: 'author' }));
		if (!t.ok) throw new Error(t.message);
		const stored = await db.selectFrom('apiToken').select(['tokenHash', 'prefix']).where('id', '=', t.id).executeTakeFirstOrThrow();
		expect(stored.tokenHash).toBe(hashSecret(t.token));
		expect(t.token.startsWith(stored.prefix)).toBe(true);
		expect(await authenticateApiToken(db, t.token)).toMatchObject({ userId: alice.id, orgId: a.id, role: 'author' });
		expect(await db.transaction().execute((trx) => revokeOwnApiToken(trx, bob.id, t.id))).toBe(false);
		expect(await db.transaction().execute((trx) => revokeOwnApiToken(trx, alice.id, t.id))).toBe(true);
		expect(await authenticateApiToken(db, t.token)).toBeUndefined();
	});
});

describe('activity', () => {
	it('updates last_active_at at most once per few minutes', async () => {
		const { alice, a } = await twoOrgs();
		const t0 = new Date('2026-12-01T10:00:00Z');
		await touchMembership(db, a.id, alice.id, t0);
		await touchMembership(db, a.id, alice.id, new Date(t0.getTime() + 60_000));
		expect((await findMembership(db, a.id, alice.id))?.lastActiveAt?.toISOString()).toBe(t0.toISOString());
		const later = new Date(t0.getTime() + 6 * 60_000);
		await touchMembership(db, a.id, alice.id, later);
		expect((await findMembership(db, a.id, alice.id))?.lastActiveAt?.toISOString()).toBe(later.toISOString());
	});
});

describe('demo seed', () => {
	it('gives the demo people their roles in the demo organisation, once', async () => {
		expect(await seedDemo(db)).toBe(true);
		expect(await seedDemo(db)).toBe(false);
		const org = await db.selectFrom('organisation').select('id').where('slug', '=', DEMO_ORGANISATION.slug).executeTakeFirstOrThrow();
		const members = await listMembers(db, org.id);
		expect(members.map((m) => [m.email, m.role]).sort()).toEqual(DEMO_USERS.map((u) => [u.email, u.role]).sort());
	});
});
