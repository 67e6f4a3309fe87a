import type { Kysely, Transaction } from 'kysely';
import type { Database } from '../db/connect';
import { authTables } from '../auth/tables';
import type { Role } from '../auth/permissions';
import { generateSecret, hashSecret, looksLikeSecret } from '../auth/secret-token';
import { writeAudit } from './audit';
import { findMembership, insertMembership } from './queries';

/** How long an invitation link works. */
export const INVITATION_VALIDITY_MS = 7 * 24 * 60 * 60_000;
export const PENDING_LIST_LIMIT = 500;

export interface PendingInvitation {
	id: string;
	email: string;
	role: Role;
	createdAt: Date;
	lastSentAt: Date;
	expiresAt: Date;
	expired: boolean;
}

export type InviteResult =
	| { ok: true; id: string; token: string; expiresAt: Date }
	| { ok: false; code: 'already_member' | 'already_invited'; message: string };

const expiry = (now: Date) => new Date(now.getTime() + INVITATION_VALIDITY_MS);

/**
 * Invites an address with a role. Refuses an address that is already a member or has an open,
 * unexpired invitation; an expired one is closed and replaced. Returns the link secret once.
 */
export async function createInvitation(
	trx: Transaction<Database>,
	input: { orgId: string; email: string; role: Role; invitedBy: string; now?: Date }
): Promise<InviteResult> {
	const now = input.now ?? new Date();
	const user = await authTables(trx as unknown as Kysely<Database>)
		.selectFrom('User')
		.select('id')
		.where('email', '=', input.email)
		.executeTakeFirst();
	if (user && (await findMembership(trx, input.orgId, user.id))) {
		return { ok: false, code: 'already_member', message: 'That address already belongs to a member.' };
	}
	const open = await trx
		.selectFrom('invitation')
		.select(['id', 'expiresAt'])
		.where('orgId', '=', input.orgId)
		.where('email', '=', input.email)
		.where('acceptedAt', 'is', null)
		.where('revokedAt', 'is', null)
		.forUpdate()
		.executeTakeFirst();
	if (open && open.expiresAt > now) {
		return { ok: false, code: 'already_invited', message: 'That address already has a pending invitation. Resend it from the list below.' };
	}
	if (open) {
		await trx.updateTable('invitation').set({ revokedAt: now }).where('orgId', '=', input.orgId).where('id', '=', open.id).execute();
	}
	const token = generateSecret('cli');
	const row = await trx
		.insertInto('invitation')
		.values({
			orgId: input.orgId,
			email: input.email,
			role: input.role,
			tokenHash: hashSecret(token),
			invitedBy: input.invitedBy,
			createdAt: now,
			lastSentAt: now,
			expiresAt: expiry(now)
		})
		.returning(['id', 'expiresAt'])
		.executeTakeFirstOrThrow();
	await writeAudit(trx, input.orgId, {
		actorId: input.invitedBy,
		action: 'invitation.created',
		subject: `invitation:${row.id}`,
		details: { email: input.email, role: input.role }
	});
	return { ok: true, id: row.id, token, expiresAt: row.expiresAt };
}

/** Open invitations (not accepted, not revoked), newest first, with whether each has expired. */
export async function listPendingInvitations(db: Kysely<Database>, orgId: string, now = new Date()): Promise<PendingInvitation[]> {
	const rows = await db
		.selectFrom('invitation')
		.select(['id', 'email', 'role', 'createdAt', 'lastSentAt', 'expiresAt'])
		.where('orgId', '=', orgId)
		.where('acceptedAt', 'is', null)
		.where('revokedAt', 'is', null)
		.orderBy('createdAt', 'desc')
		.limit(PENDING_LIST_LIMIT)
		.execute();
	return rows.map((r) => ({ ...r, expired: r.expiresAt <= now }));
}

/**
 * Issues a fresh link for an open invitation and restarts its seven days; the old link stops
 * working (only the new hash is kept). Undefined when no such open invitation exists.
 */
export async function resendInvitation(
	trx: Transaction<Database>,
	input: { orgId: string; id: string; actorId: string; now?: Date }
): Promise<{ token: string; email: string; role: Role; expiresAt: Date } | undefined> {
	const now = input.now ?? new Date();
	const token = generateSecret('cli');
	const row = await trx
		.updateTable('invitation')
		.set({ tokenHash: hashSecret(token), lastSentAt: now, expiresAt: expiry(now) })
		.where('orgId', '=', input.orgId)
		.where('id', '=', input.id)
		.where('acceptedAt', 'is', null)
		.where('revokedAt', 'is', null)
		.returning(['email', 'role', 'expiresAt'])
		.executeTakeFirst();
	if (!row) return undefined;
	await writeAudit(trx, input.orgId, { actorId: input.actorId, action: 'invitation.resent', subject: `invitation:${input.id}`, details: { email: row.email } });
	return { token, ...row };
}

/** Revokes an open invitation; false when there is none with that id in this organisation. */
export async function revokeInvitation(trx: Transaction<Database>, input: { orgId: string; id: string; actorId: string }): Promise<boolean> {
	const row = await trx
		.updateTable('invitation')
		.set({ revokedAt: new Date() })
		.where('orgId', '=', input.orgId)
		.where('id', '=', input.id)
		.where('acceptedAt', 'is', null)
		.where('revokedAt', 'is', null)
		.returning('email')
		.executeTakeFirst();
	if (!row) return false;
	await writeAudit(trx, input.orgId, { actorId: input.actorId, action: 'invitation.revoked', subject: `invitation:${input.id}`, details: { email: row.email } });
	return true;
}

export type InvitationState = 'open' | 'expired' | 'revoked' | 'accepted';

export interface InvitationView {
	id: string;
	orgId: string;
	orgSlug: string;
	orgName: string;
	email: string;
	role: Role;
	expiresAt: Date;
	state: InvitationState;
}

/**
 * The invitation a link secret names, or undefined for an unknown or malformed one. Looked up by
 * hash, not by organisation: the secret is the whole address, and only its holder has it.
 */
export async function findInvitationByToken(db: Kysely<Database> | Transaction<Database>, token: string, now = new Date()): Promise<InvitationView | undefined> {
	if (!looksLikeSecret(token, 'cli')) return undefined;
	const row = await db
		.selectFrom('invitation')
		.innerJoin('organisation', 'organisation.id', 'invitation.orgId')
		.select([
			'invitation.id',
			'invitation.orgId',
			'organisation.slug as orgSlug',
			'organisation.name as orgName',
			'invitation.email',
			'invitation.role',
			'invitation.expiresAt',
			'invitation.acceptedAt',
			'invitation.revokedAt'
		])
		.where('invitation.tokenHash', '=', hashSecret(token))
		.executeTakeFirst();
	if (!row) return undefined;
	const state: InvitationState = row.acceptedAt ? 'accepted' : row.revokedAt ? 'revoked' : row.expiresAt <= now ? 'expired' : 'open';
	return { id: row.id, orgId: row.orgId, orgSlug: row.orgSlug, orgName: row.orgName, email: row.email, role: row.role, expiresAt: row.expiresAt, state };
}

export type AcceptResult =
	| { ok: true; orgSlug: string; role: Role; alreadyMember: boolean }
	| { ok: false; code: 'unknown' | 'expired' | 'revoked' | 'accepted' | 'wrong_address' };

/**
 * Accepts an invitation for the signed-in user: their address must be the invited one. Joins with
 * the invited role; someone already a member keeps their role and the invitation is closed.
 */
export async function acceptInvitation(
	trx: Transaction<Database>,
	input: { token: string; userId: string; userEmail: string; now?: Date }
): Promise<AcceptResult> {
	const now = input.now ?? new Date();
	const found = await findInvitationByToken(trx, input.token, now);
	if (!found) return { ok: false, code: 'unknown' };
	// Lock the row so a double click cannot accept twice.
	const locked = await trx
		.selectFrom('invitation')
		.select(['acceptedAt', 'revokedAt', 'expiresAt'])
		.where('orgId', '=', found.orgId)
		.where('id', '=', found.id)
		.forUpdate()
		.executeTakeFirstOrThrow();
	if (locked.acceptedAt) return { ok: false, code: 'accepted' };
	if (locked.revokedAt) return { ok: false, code: 'revoked' };
	if (locked.expiresAt <= now) return { ok: false, code: 'expired' };
	if (input.userEmail.trim().toLowerCase() !== found.email) return { ok: false, code: 'wrong_address' };
	const existing = await findMembership(trx, found.orgId, input.userId);
	if (!existing) await insertMembership(trx, { orgId: found.orgId, userId: input.userId, role: found.role });
	await trx
		.updateTable('invitation')
		.set({ acceptedAt: now, acceptedBy: input.userId })
		.where('orgId', '=', found.orgId)
		.where('id', '=', found.id)
		.execute();
	await writeAudit(trx, found.orgId, {
		actorId: input.userId,
		action: existing ? 'invitation.accepted' : 'member.joined',
		subject: `user:${input.userId}`,
		details: { email: found.email, role: existing ? existing.role : found.role, invitation: found.id }
	});
	return { ok: true, orgSlug: found.orgSlug, role: existing ? existing.role : found.role, alreadyMember: Boolean(existing) };
}
