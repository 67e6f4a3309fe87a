import type { Kysely, Transaction } from 'kysely';
import type { Database } from '../db/connect';
import { writeAudit } from '../orgs/audit';
import { findMembership } from '../orgs/queries';
import { type Role, roleRank } from './permissions';
import { generateSecret, hashSecret, looksLikeSecret } from './secret-token';

export interface ApiTokenSummary {
	id: string;
	orgId: string;
	orgSlug: string;
	orgName: string;
	name: string;
	role: Role;
	prefix: string;
	createdAt: Date;
	lastUsedAt: Date | null;
	revokedAt: Date | null;
}

/** The principal behind a valid bearer token. */
export interface TokenPrincipal {
	tokenId: string;
	userId: string;
	orgId: string;
	/** The role written on the token; the guard lowers it to the owner's current role. */
	role: Role;
}

/** Characters of the token kept for display ("clt_AbC12xYz…"). */
const PREFIX_LENGTH = 12;
export const TOKENS_PER_USER_LIMIT = 50;

export type CreateTokenResult =
	| { ok: true; token: string; id: string }
	| { ok: false; field: 'org' | 'role' | 'name'; code: 'not_member' | 'role_too_high' | 'too_many'; message: string };

/**
 * Creates a personal token for one organisation with a role no higher than the user's own there.
 * Returns the secret once; only its hash is stored.
 */
export async function createApiToken(
	trx: Transaction<Database>,
	input: { userId: string; orgId: string; name: string; role: Role }
): Promise<CreateTokenResult> {
	const membership = await findMembership(trx, input.orgId, input.userId);
	if (!membership) return { ok: false, field: 'org', code: 'not_member', message: 'Choose one of your organisations.' };
	if (roleRank(input.role) > roleRank(membership.role)) {
		return { ok: false, field: 'role', code: 'role_too_high', message: 'A token cannot have a higher role than yours in that organisation.' };
	}
	const active = await trx
		.selectFrom('apiToken')
		.select((eb) => eb.fn.countAll<string>().as('n'))
		.where('userId', '=', input.userId)
		.where('revokedAt', 'is', null)
		.executeTakeFirstOrThrow();
	if (Number(active.n) >= TOKENS_PER_USER_LIMIT) {
		return { ok: false, field: 'name', code: 'too_many', message: `You have ${TOKENS_PER_USER_LIMIT} active tokens. Revoke one first.` };
	}
	const token = generateSecret('clt');
	const row = await trx
		.insertInto('apiToken')
		.values({
			orgId: input.orgId,
			userId: input.userId,
			name: input.name,
			role: input.role,
			tokenHash: hashSecret(token),
			prefix: token.slice(0, PREFIX_LENGTH)
		})
		.returning('id')
		.executeTakeFirstOrThrow();
	await writeAudit(trx, input.orgId, {
		actorId: input.userId,
		action: 'token.created',
		subject: `token:${row.id}`,
		details: { name: input.name, role: input.role }
	});
	return { ok: true, token, id: row.id };
}

/**
 * The user's tokens across their organisations, newest first. Scoped by user, not organisation:
 * these are the user's own credentials, shown on their profile.
 */
export async function listTokensOfUser(db: Kysely<Database>, userId: string): Promise<ApiTokenSummary[]> {
	return db
		.selectFrom('apiToken')
		.innerJoin('organisation', 'organisation.id', 'apiToken.orgId')
		.select([
			'apiToken.id',
			'apiToken.orgId',
			'organisation.slug as orgSlug',
			'organisation.name as orgName',
			'apiToken.name',
			'apiToken.role',
			'apiToken.prefix',
			'apiToken.createdAt',
			'apiToken.lastUsedAt',
			'apiToken.revokedAt'
		])
		.where('apiToken.userId', '=', userId)
		.orderBy('apiToken.revokedAt', (ob) => ob.desc().nullsFirst())
		.orderBy('apiToken.createdAt', 'desc')
		.limit(200)
		.execute();
}

/** Revokes one of the user's own tokens; false when it is not theirs or already revoked. */
export async function revokeOwnApiToken(trx: Transaction<Database>, userId: string, tokenId: string): Promise<boolean> {
	const row = await trx
		.updateTable('apiToken')
		.set({ revokedAt: new Date() })
		.where('id', '=', tokenId)
		.where('userId', '=', userId)
		.where('revokedAt', 'is', null)
		.returning(['orgId', 'name'])
		.executeTakeFirst();
	if (!row) return false;
	await writeAudit(trx, row.orgId, { actorId: userId, action: 'token.revoked', subject: `token:${tokenId}`, details: { name: row.name } });
	return true;
}

export interface OrgTokenSummary {
	id: string;
	userId: string;
	name: string;
	role: Role;
	prefix: string;
	createdAt: Date;
	lastUsedAt: Date | null;
}

/** The organisation's active tokens, newest first, for its admins to review. */
export async function listActiveOrgTokens(db: Kysely<Database>, orgId: string): Promise<OrgTokenSummary[]> {
	return db
		.selectFrom('apiToken')
		.select(['id', 'userId', 'name', 'role', 'prefix', 'createdAt', 'lastUsedAt'])
		.where('orgId', '=', orgId)
		.where('revokedAt', 'is', null)
		.orderBy('createdAt', 'desc')
		.limit(500)
		.execute();
}

/** An admin revokes any member's token for their organisation; false when there is none such. */
export async function revokeOrgApiToken(trx: Transaction<Database>, input: { orgId: string; tokenId: string; actorId: string }): Promise<boolean> {
	const row = await trx
		.updateTable('apiToken')
		.set({ revokedAt: new Date() })
		.where('orgId', '=', input.orgId)
		.where('id', '=', input.tokenId)
		.where('revokedAt', 'is', null)
		.returning(['name', 'userId'])
		.executeTakeFirst();
	if (!row) return false;
	await writeAudit(trx, input.orgId, {
		actorId: input.actorId,
		action: 'token.revoked',
		subject: `token:${input.tokenId}`,
		details: { name: row.name, owner: row.userId }
	});
	return true;
}

/** Revokes every active token a user holds for one organisation (when they leave it). */
export async function revokeTokensOfMember(trx: Transaction<Database>, orgId: string, userId: string): Promise<number> {
	const r = await trx
		.updateTable('apiToken')
		.set({ revokedAt: new Date() })
		.where('orgId', '=', orgId)
		.where('userId', '=', userId)
		.where('revokedAt', 'is', null)
		.executeTakeFirst();
	return Number(r.numUpdatedRows);
}

/** How stale last_used_at may get before a request refreshes it. */
const USE_RESOLUTION_MS = 60_000;

/**
 * The principal behind a presented bearer token, or undefined when it is malformed, unknown or
 * revoked. Looked up by hash across organisations: the token itself names its organisation.
 */
export async function authenticateApiToken(db: Kysely<Database>, presented: string, now = new Date()): Promise<TokenPrincipal | undefined> {
	if (!looksLikeSecret(presented, 'clt')) return undefined;
	const row = await db
		.selectFrom('apiToken')
		.select(['id', 'userId', 'orgId', 'role', 'lastUsedAt'])
		.where('tokenHash', '=', hashSecret(presented))
		.where('revokedAt', 'is', null)
		.executeTakeFirst();
	if (!row) return undefined;
	if (!row.lastUsedAt || now.getTime() - row.lastUsedAt.getTime() > USE_RESOLUTION_MS) {
		await db.updateTable('apiToken').set({ lastUsedAt: now }).where('id', '=', row.id).where('orgId', '=', row.orgId).execute();
	}
	return { tokenId: row.id, userId: row.userId, orgId: row.orgId, role: row.role };
}
