import type { Kysely, Selectable, Transaction } from 'kysely';
import type { Database } from '../db/connect';
import type { Membership as MembershipRow, Organisation as OrganisationRow } from '../db/schema';
import { authTables } from '../auth/tables';
import type { Role } from '../auth/permissions';

export type Organisation = Pick<Selectable<OrganisationRow>, 'id' | 'slug' | 'name'>;
export type Membership = Pick<Selectable<MembershipRow>, 'orgId' | 'userId' | 'role' | 'joinedAt' | 'lastActiveAt'>;

export interface MyOrganisation extends Organisation {
	role: Role;
}

export interface Member {
	userId: string;
	name: string | null;
	email: string;
	role: Role;
	joinedAt: Date;
	lastActiveAt: Date | null;
}

type Db = Kysely<Database> | Transaction<Database>;

/** Most members one organisation lists on a page. */
export const MEMBER_LIST_LIMIT = 1000;

/**
 * The organisation with this slug, or undefined. Deliberately not scoped by org id: the slug is
 * how a request names its tenant, and the guard checks membership right after.
 */
export async function findOrgBySlug(db: Db, slug: string): Promise<Organisation | undefined> {
	return db.selectFrom('organisation').select(['id', 'slug', 'name']).where('slug', '=', slug).executeTakeFirst();
}

/** Inserts an organisation; undefined when the slug is already taken (nothing written). */
export async function insertOrg(db: Db, values: { name: string; slug: string }): Promise<Organisation | undefined> {
	return db
		.insertInto('organisation')
		.values(values)
		.onConflict((oc) => oc.column('slug').doNothing())
		.returning(['id', 'slug', 'name'])
		.executeTakeFirst();
}

/**
 * Sets the organisation's name and returns the name it had, or undefined when there is no such
 * organisation. The old name is read under a row lock, so two renames at once each see the other.
 */
export async function updateOrgName(trx: Transaction<Database>, orgId: string, name: string): Promise<{ previous: string } | undefined> {
	const row = await trx.selectFrom('organisation').select('name').where('id', '=', orgId).forUpdate().executeTakeFirst();
	if (!row) return undefined;
	if (row.name !== name) await trx.updateTable('organisation').set({ name }).where('id', '=', orgId).execute();
	return { previous: row.name };
}

export async function findMembership(db: Db, orgId: string, userId: string): Promise<Membership | undefined> {
	return db
		.selectFrom('membership')
		.select(['orgId', 'userId', 'role', 'joinedAt', 'lastActiveAt'])
		.where('orgId', '=', orgId)
		.where('userId', '=', userId)
		.executeTakeFirst();
}

/**
 * Every organisation the user belongs to, by name. Scoped by user, not by organisation: this is
 * the list the organisation switcher shows, and it only ever names the user's own memberships.
 */
export async function listOrgsOfUser(db: Db, userId: string): Promise<MyOrganisation[]> {
	return db
		.selectFrom('membership')
		.innerJoin('organisation', 'organisation.id', 'membership.orgId')
		.select(['organisation.id', 'organisation.slug', 'organisation.name', 'membership.role'])
		.where('membership.userId', '=', userId)
		.orderBy('organisation.name')
		.limit(200)
		.execute();
}

/** The organisation's members with their names and addresses, admins first, then by name. */
export async function listMembers(db: Db, orgId: string): Promise<Member[]> {
	const rows = await db
		.selectFrom('membership')
		.select(['userId', 'role', 'joinedAt', 'lastActiveAt'])
		.where('orgId', '=', orgId)
		.limit(MEMBER_LIST_LIMIT)
		.execute();
	if (rows.length === 0) return [];
	// "User" is an Auth.js table outside the camelCase plugin (auth/tables.ts), so it is read apart.
	const users = await authTables(db as Kysely<Database>)
		.selectFrom('User')
		.select(['id', 'name', 'email'])
		.where(
			'id',
			'in',
			rows.map((r) => r.userId)
		)
		.execute();
	const byId = new Map(users.map((u) => [u.id, u]));
	const rank: Record<Role, number> = { admin: 0, author: 1, contributor: 2, viewer: 3 };
	return rows
		.map((r) => ({ ...r, name: byId.get(r.userId)?.name ?? null, email: byId.get(r.userId)?.email ?? '' }))
		.sort((a, b) => rank[a.role] - rank[b.role] || (a.name ?? a.email).localeCompare(b.name ?? b.email));
}

export async function insertMembership(db: Db, values: { orgId: string; userId: string; role: Role }): Promise<void> {
	await db.insertInto('membership').values(values).execute();
}

/** Changes a member's role; false when they are not a member. */
export async function updateMemberRole(db: Db, orgId: string, userId: string, role: Role): Promise<boolean> {
	const r = await db
		.updateTable('membership')
		.set({ role })
		.where('orgId', '=', orgId)
		.where('userId', '=', userId)
		.executeTakeFirst();
	return r.numUpdatedRows > 0n;
}

export async function deleteMembership(db: Db, orgId: string, userId: string): Promise<boolean> {
	const r = await db.deleteFrom('membership').where('orgId', '=', orgId).where('userId', '=', userId).executeTakeFirst();
	return r.numDeletedRows > 0n;
}

/**
 * Locks the organisation's admin rows until the transaction ends and returns their user ids, so
 * two admins demoting each other at once cannot leave the organisation without one.
 */
export async function lockAdmins(trx: Transaction<Database>, orgId: string): Promise<string[]> {
	const rows = await trx
		.selectFrom('membership')
		.select('userId')
		.where('orgId', '=', orgId)
		.where('role', '=', 'admin')
		.forUpdate()
		.execute();
	return rows.map((r) => r.userId);
}

/** How stale last_active_at may get before a request refreshes it. */
export const ACTIVITY_RESOLUTION_MS = 5 * 60_000;

/**
 * Records that the member was active now, unless that was recorded within the last few minutes:
 * the condition sits in SQL, so concurrent requests write at most once per window.
 */
export async function touchMembership(db: Db, orgId: string, userId: string, now = new Date()): Promise<void> {
	const cutoff = new Date(now.getTime() - ACTIVITY_RESOLUTION_MS);
	await db
		.updateTable('membership')
		.set({ lastActiveAt: now })
		.where('orgId', '=', orgId)
		.where('userId', '=', userId)
		.where((eb) => eb.or([eb('lastActiveAt', 'is', null), eb('lastActiveAt', '<', cutoff)]))
		.execute();
}
