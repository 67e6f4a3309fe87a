import type { Kysely, Transaction } from 'kysely';
import type { Database } from '../db/connect';
import type { JsonObject } from '../db/schema';
import { authTables } from '../auth/tables';

/** Every event the audit log records. Stable strings: they are stored. */
export type AuditAction =
	| 'org.created'
	| 'org.renamed'
	| 'member.joined'
	| 'member.role_changed'
	| 'member.removed'
	| 'invitation.created'
	| 'invitation.resent'
	| 'invitation.revoked'
	| 'invitation.accepted'
	| 'token.created'
	| 'token.revoked'
	| 'bundle.imported';

export interface AuditEntry {
	id: string;
	at: Date;
	action: AuditAction;
	actorId: string | null;
	actorName: string | null;
	actorEmail: string | null;
	subject: string | null;
	details: JsonObject;
}

/** Writes one audit row. Call it with the transaction that makes the change it records. */
export async function writeAudit(
	trx: Transaction<Database>,
	orgId: string,
	entry: { actorId: string | null; action: AuditAction; subject?: string | null; details?: JsonObject }
): Promise<void> {
	await trx
		.insertInto('auditLog')
		.values({
			orgId,
			actorId: entry.actorId,
			action: entry.action,
			subject: entry.subject ?? null,
			details: JSON.stringify(entry.details ?? {})
		})
		.execute();
}

export const AUDIT_PAGE_SIZE = 100;

/** The newest audit rows of the organisation, newest first; `before` pages back by id. */
export async function listAudit(
	db: Kysely<Database>,
	orgId: string,
	options: { before?: string; limit?: number } = {}
): Promise<AuditEntry[]> {
	let q = db
		.selectFrom('auditLog')
		.select(['id', 'at', 'action', 'actorId', 'subject', 'details'])
		.where('orgId', '=', orgId)
		.orderBy('at', 'desc')
		.orderBy('id', 'desc')
		.limit(Math.min(options.limit ?? AUDIT_PAGE_SIZE, AUDIT_PAGE_SIZE));
	if (options.before && /^\d{1,18}$/.test(options.before)) q = q.where('id', '<', options.before);
	const rows = await q.execute();
	const actorIds = [...new Set(rows.map((r) => r.actorId).filter((id): id is string => id !== null))];
	const actors =
		actorIds.length === 0
			? []
			: await authTables(db).selectFrom('User').select(['id', 'name', 'email']).where('id', 'in', actorIds).execute();
	const byId = new Map(actors.map((a) => [a.id, a]));
	return rows.map((r) => ({
		id: String(r.id),
		at: r.at,
		action: r.action as AuditAction,
		actorId: r.actorId,
		actorName: r.actorId ? (byId.get(r.actorId)?.name ?? null) : null,
		actorEmail: r.actorId ? (byId.get(r.actorId)?.email ?? null) : null,
		subject: r.subject,
		details: (r.details ?? {}) as JsonObject
	}));
}
