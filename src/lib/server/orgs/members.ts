import type { Kysely, Transaction } from 'kysely';
import { authTables } from '../auth/tables';
import type { Database } from '../db/connect';
import { revokeTokensOfMember } from '../auth/api-tokens';
import type { Role } from '../auth/permissions';
import { writeAudit } from './audit';
import { deleteMembership, findMembership, insertMembership, insertOrg, lockAdmins, type Organisation, updateMemberRole, updateOrgName } from './queries';

export const LAST_ADMIN_MESSAGE =
	'An organisation needs at least one admin. Make another member an admin first.';

export type MemberChangeResult =
	| { ok: true }
	| { ok: false; code: 'not_found' | 'last_admin'; message: string };

/** The member's address as it is now, kept in audit details so the log reads without lookups. */
async function emailOf(trx: Transaction<Database>, userId: string): Promise<string | null> {
	const row = await authTables(trx as unknown as Kysely<Database>).selectFrom('User').select('email').where('id', '=', userId).executeTakeFirst();
	return row?.email ?? null;
}

/**
 * Creates an organisation with its creator as its first admin. Undefined when the slug is taken;
 * then nothing is written.
 */
export async function createOrganisation(
	trx: Transaction<Database>,
	input: { name: string; slug: string; creatorId: string }
): Promise<Organisation | undefined> {
	const org = await insertOrg(trx, { name: input.name, slug: input.slug });
	if (!org) return undefined;
	await insertMembership(trx, { orgId: org.id, userId: input.creatorId, role: 'admin' });
	await writeAudit(trx, org.id, { actorId: input.creatorId, action: 'org.created', subject: `org:${org.slug}`, details: { name: org.name } });
	return org;
}

/**
 * Renames the organisation (the slug, and so every link, stays) and records it in the audit log.
 * `changed` is false when the name was already this one: then nothing is written. Undefined when
 * the organisation does not exist.
 */
export async function renameOrganisation(
	trx: Transaction<Database>,
	input: { orgId: string; actorId: string; name: string }
): Promise<{ changed: boolean } | undefined> {
	const updated = await updateOrgName(trx, input.orgId, input.name);
	if (!updated) return undefined;
	if (updated.previous === input.name) return { changed: false };
	await writeAudit(trx, input.orgId, { actorId: input.actorId, action: 'org.renamed', details: { from: updated.previous, to: input.name } });
	return { changed: true };
}

/** Changes a member's role, refusing to demote the organisation's last admin. */
export async function changeMemberRole(
	trx: Transaction<Database>,
	input: { orgId: string; actorId: string; userId: string; role: Role }
): Promise<MemberChangeResult> {
	const admins = await lockAdmins(trx, input.orgId);
	const current = await findMembership(trx, input.orgId, input.userId);
	if (!current) return { ok: false, code: 'not_found', message: 'That person is no longer a member.' };
	if (current.role === input.role) return { ok: true };
	if (current.role === 'admin' && admins.length <= 1) return { ok: false, code: 'last_admin', message: LAST_ADMIN_MESSAGE };
	await updateMemberRole(trx, input.orgId, input.userId, input.role);
	await writeAudit(trx, input.orgId, {
		actorId: input.actorId,
		action: 'member.role_changed',
		subject: `user:${input.userId}`,
		details: { member: await emailOf(trx, input.userId), from: current.role, to: input.role }
	});
	return { ok: true };
}

/** Removes a member and revokes their tokens for the organisation; never the last admin. */
export async function removeMember(
	trx: Transaction<Database>,
	input: { orgId: string; actorId: string; userId: string }
): Promise<MemberChangeResult> {
	const admins = await lockAdmins(trx, input.orgId);
	const current = await findMembership(trx, input.orgId, input.userId);
	if (!current) return { ok: false, code: 'not_found', message: 'That person is no longer a member.' };
	if (current.role === 'admin' && admins.length <= 1) return { ok: false, code: 'last_admin', message: LAST_ADMIN_MESSAGE };
	await deleteMembership(trx, input.orgId, input.userId);
	const revoked = await revokeTokensOfMember(trx, input.orgId, input.userId);
	await writeAudit(trx, input.orgId, {
		actorId: input.actorId,
		action: 'member.removed',
		subject: `user:${input.userId}`,
		details: { member: await emailOf(trx, input.userId), role: current.role, tokensRevoked: revoked }
	});
	return { ok: true };
}
