import type { Kysely } from 'kysely';
import type { EntryFields, EntryTransition, EntryUpdate, TraceRole } from '../../schemas/entries';
import { can } from '../auth/permissions';
import type { MemberContext } from '../auth/member';
import type { Database } from '../db/connect';
import { recordEntryChange } from './changes';
import {
	type Entry,
	findEntry,
	insertEntry,
	insertRevision,
	lockEntry,
	restoreEntry,
	setEntryStatus,
	snapshotOf,
	softDeleteEntry,
	updateEntryFields
} from './queries';
import { insertReviewEvent } from './review-history';
import { checkTransition, mayEdit, readerFor, type TransitionCheck } from './rules';

/**
 * Units of work on entries. Each opens one transaction: the entry change, its revision and the
 * search-outbox row commit together or not at all.
 */

export async function createEntry(db: Kysely<Database>, member: MemberContext, fields: EntryFields): Promise<Entry> {
	return db.transaction().execute(async (trx) => {
		const id = await insertEntry(trx, member.orgId, member.userId, fields);
		await insertRevision(trx, member.orgId, id, 1, member.userId, snapshotOf(fields), 'Created');
		await recordEntryChange(trx, member.orgId, id, 'upsert');
		const entry = await findEntry(trx, member.orgId, id, readerFor(member));
		if (!entry) throw new Error('entry vanished inside its own transaction');
		return entry;
	});
}

export type UpdateResult =
	| { kind: 'saved'; entry: Entry }
	| { kind: 'not_found' }
	| { kind: 'forbidden' }
	/** Someone saved a newer version first: nothing was written; both versions are returned. */
	| { kind: 'conflict'; current: Entry; yours: EntryFields };

export async function updateEntry(
	db: Kysely<Database>,
	member: MemberContext,
	id: string,
	update: EntryUpdate,
	note = ''
): Promise<UpdateResult> {
	return db.transaction().execute(async (trx): Promise<UpdateResult> => {
		const reader = readerFor(member);
		const locked = await lockEntry(trx, member.orgId, id);
		if (!locked || !(await findEntry(trx, member.orgId, id, reader))) return { kind: 'not_found' };
		const { version, ...patch } = update;
		const fields: EntryFields = { ...snapshotOf(locked), ...stripUndefined(patch) };
		if (locked.version !== version) return { kind: 'conflict', current: locked, yours: fields };
		if (!mayEdit(member, locked)) return { kind: 'forbidden' };
		const newVersion = await updateEntryFields(trx, member.orgId, id, version, fields);
		if (newVersion === undefined) return { kind: 'conflict', current: locked, yours: fields };
		await insertRevision(trx, member.orgId, id, newVersion, member.userId, fields, note);
		await recordEntryChange(trx, member.orgId, id, 'upsert');
		const entry = await findEntry(trx, member.orgId, id, reader);
		return entry ? { kind: 'saved', entry } : { kind: 'not_found' };
	});
}

function stripUndefined<T extends object>(o: T): Partial<T> {
	return Object.fromEntries(Object.entries(o).filter(([, v]) => v !== undefined)) as Partial<T>;
}

export type TransitionResult =
	| { kind: 'done'; entry: Entry }
	| { kind: 'not_found' }
	| { kind: 'refused'; reason: Extract<TransitionCheck, { ok: false }>['reason'] };

export async function transitionEntry(
	db: Kysely<Database>,
	member: MemberContext,
	id: string,
	transition: EntryTransition,
	comment: string
): Promise<TransitionResult> {
	return db.transaction().execute(async (trx): Promise<TransitionResult> => {
		const reader = readerFor(member);
		const locked = await lockEntry(trx, member.orgId, id);
		if (!locked || !(await findEntry(trx, member.orgId, id, reader))) return { kind: 'not_found' };
		const check = checkTransition(member, locked, transition, comment);
		if (!check.ok) return { kind: 'refused', reason: check.reason };
		const now = new Date();
		await setEntryStatus(trx, member.orgId, id, {
			status: check.to,
			...(transition === 'submit' ? { submittedAt: now, reviewComment: null } : {}),
			...(transition === 'publish' ? { publishedAt: locked.publishedAt ?? now, reviewerId: member.userId, reviewComment: null } : {}),
			...(transition === 'return' ? { reviewerId: member.userId, reviewComment: comment.trim() } : {})
		});
		// The history row commits with the change or not at all, so the conversation never misses a step.
		await insertReviewEvent(trx, member.orgId, { entryId: id, actorId: member.userId, transition, fromStatus: locked.status, toStatus: check.to, comment, at: now });
		await recordEntryChange(trx, member.orgId, id, 'upsert');
		const entry = await findEntry(trx, member.orgId, id, reader);
		return entry ? { kind: 'done', entry } : { kind: 'not_found' };
	});
}

/** Soft-deletes (admins only, checked by the caller's guard); restorable for RESTORE_WINDOW_DAYS. */
export const RESTORE_WINDOW_DAYS = 30;

export async function deleteEntry(db: Kysely<Database>, member: MemberContext, id: string): Promise<boolean> {
	return db.transaction().execute(async (trx) => {
		const deleted = await softDeleteEntry(trx, member.orgId, id, member.userId);
		if (deleted) await recordEntryChange(trx, member.orgId, id, 'delete');
		return deleted;
	});
}

/** Undoes a soft delete while the entry is inside the restore window; false when it is not. */
export async function restoreDeletedEntry(db: Kysely<Database>, member: MemberContext, id: string): Promise<boolean> {
	return db.transaction().execute(async (trx) => {
		const restored = await restoreEntry(trx, member.orgId, id, RESTORE_WINDOW_DAYS);
		if (restored) await recordEntryChange(trx, member.orgId, id, 'upsert');
		return restored;
	});
}

export type AttachTraceResult = { kind: 'attached' } | { kind: 'not_found' } | { kind: 'forbidden' };

/**
 * Re-homes a capture saved from the match screen (a `query` trace, attached to nothing) onto an
 * entry as one of its traces, in one transaction with the entry-change record (search outbox and
 * NOTIFY, so every match index picks the trace up). Only the member who saved the capture may
 * move it, unless they may edit any entry; and only onto an entry they may edit.
 */
export async function attachQueryTrace(
	db: Kysely<Database>,
	member: MemberContext,
	traceId: string,
	entryId: string,
	role: Exclude<TraceRole, 'query'> = 'fault',
	label = ''
): Promise<AttachTraceResult> {
	return db.transaction().execute(async (trx): Promise<AttachTraceResult> => {
		const locked = await lockEntry(trx, member.orgId, entryId);
		if (!locked || !(await findEntry(trx, member.orgId, entryId, readerFor(member)))) return { kind: 'not_found' };
		if (!mayEdit(member, locked)) return { kind: 'forbidden' };
		let q = trx
			.updateTable('trace')
			.set({ entryId, role, label })
			.where('orgId', '=', member.orgId)
			.where('id', '=', traceId)
			.where('role', '=', 'query')
			.where('entryId', 'is', null);
		if (!can(member.role, 'entry:editAny')) q = q.where('createdBy', '=', member.userId);
		const moved = await q.returning('id').executeTakeFirst();
		if (!moved) return { kind: 'not_found' };
		await recordEntryChange(trx, member.orgId, entryId, 'upsert');
		return { kind: 'attached' };
	});
}
