/**
 * The search outbox: Postgres is the only source of truth, and the search index learns about
 * changes from rows written in the same transaction as the change. A worker drains them in order,
 * retrying with exponential backoff while the engine is down; several app instances can drain at
 * once (`FOR UPDATE SKIP LOCKED`), and changes to one entity are never applied out of order.
 *
 * Generic over the entity: the feature that owns the entity supplies `loadDocuments(ids)`, which
 * reads the current state from the database. Whatever the queued ops were, the index ends up
 * equal to that state (an upsert of an entity that no longer loads becomes a delete).
 */
import type { Kysely, Transaction } from 'kysely';
import type { Database } from '../db/connect';
import { deleteDocuments, indexDocuments, SearchEngineError, type EntryDocument, type SearchEngine } from './engine';

export type OutboxOp = 'upsert' | 'delete';

/** Reads the current documents for these entity ids; ids it does not return are removed from the index. */
export type LoadDocuments = (ids: string[]) => Promise<EntryDocument[]>;

/**
 * Queues an index update. Call it inside the writer's transaction, so the change and the row
 * commit (or roll back) together.
 */
export async function enqueueSearchUpdate(trx: Transaction<Database> | Kysely<Database>, orgId: string, entryId: string, op: OutboxOp): Promise<void> {
	await trx.insertInto('searchOutbox').values({ orgId, entityId: entryId, op }).execute();
}

export const BACKOFF_BASE_MS = 1_000;
export const BACKOFF_MAX_MS = 10 * 60_000;

/** Wait before attempt n+1 after n failed attempts: 1 s, 2 s, 4 s, … capped at 10 minutes. */
export function backoffDelayMs(failedAttempts: number): number {
	if (failedAttempts <= 0) return 0;
	return Math.min(BACKOFF_MAX_MS, BACKOFF_BASE_MS * 2 ** (failedAttempts - 1));
}

export interface DrainOptions {
	loadDocuments: LoadDocuments;
	/** The clock; tests pass one to step over backoff delays. */
	now?: () => Date;
	batchSize?: number;
	/** Stop after this many batches (default: until nothing is due). */
	maxBatches?: number;
}

export interface DrainResult {
	/** Rows applied to the index and marked done. */
	applied: number;
	/** Rows that failed this time and were rescheduled. */
	failed: number;
	/** Rows left for later because an earlier change to the same entity is not done yet. */
	deferred: number;
	/** The last error met, if any (the engine being down stops the drain). */
	error?: string;
}

interface OutboxRow {
	id: string;
	orgId: string;
	entityId: string;
	op: string;
}

const entityKey = (r: { orgId: string; entityId: string }) => `${r.orgId}/${r.entityId}`;

/**
 * Applies one entity group's final state. Returns nothing; throws what the engine threw.
 * A document that loads under another organisation than the row's is refused: the row and the
 * entity disagree, which is a bug in the caller, not something to index.
 */
async function applyGroups(engine: SearchEngine, groups: Map<string, OutboxRow[]>, loadDocuments: LoadDocuments): Promise<void> {
	const upserts = new Map<string, string>(); // entityId → orgId
	const deletes: string[] = [];
	for (const rows of groups.values()) {
		const last = rows[rows.length - 1];
		if (last.op === 'upsert') upserts.set(last.entityId, last.orgId);
		else deletes.push(last.entityId);
	}
	const loaded = upserts.size ? await loadDocuments([...upserts.keys()]) : [];
	const docs: EntryDocument[] = [];
	for (const doc of loaded) {
		const orgId = upserts.get(doc.id);
		if (orgId === undefined) continue;
		if (doc.orgId !== orgId) throw new SearchEngineError(`Entry ${doc.id} loaded for organisation ${doc.orgId}, queued for ${orgId}.`, 'organisation_mismatch');
		docs.push(doc);
		upserts.delete(doc.id);
	}
	// Queued as upserts but gone from the database since: remove them.
	deletes.push(...upserts.keys());
	await indexDocuments(engine, docs);
	await deleteDocuments(engine, deletes);
}

const message = (e: unknown) => (e instanceof Error ? e.message : String(e));

/**
 * Drains due outbox rows in id order, one transaction per batch. Rows stay locked while their
 * batch is applied, so another instance skips them; an entity with an earlier pending row (locked
 * elsewhere or waiting out a backoff) waits too, which keeps each entity's changes in order.
 * When the engine is unreachable the batch is rescheduled with backoff and the drain stops.
 */
export async function drainOutbox(db: Kysely<Database>, engine: SearchEngine, options: DrainOptions): Promise<DrainResult> {
	const now = options.now ?? (() => new Date());
	const batchSize = options.batchSize ?? 100;
	const result: DrainResult = { applied: 0, failed: 0, deferred: 0 };
	for (let batch = 0; options.maxBatches === undefined || batch < options.maxBatches; batch++) {
		const outcome = await db.transaction().execute(async (trx) => {
			const at = now();
			// Deliberately across organisations: the worker serves every tenant.
			const rows: OutboxRow[] = await trx
				.selectFrom('searchOutbox')
				.select(['id', 'orgId', 'entityId', 'op'])
				.where('doneAt', 'is', null)
				.where('nextAttemptAt', '<=', at)
				.orderBy('id')
				.limit(batchSize)
				.forUpdate()
				.skipLocked()
				.execute();
			if (rows.length === 0) return { rows: 0, applied: 0, failed: 0, deferred: 0, stop: true };

			const ids = rows.map((r) => r.id);
			const earlier = await trx
				.selectFrom('searchOutbox')
				.select(['id', 'orgId', 'entityId'])
				.where('doneAt', 'is', null)
				.where('entityId', 'in', [...new Set(rows.map((r) => r.entityId))])
				.where('id', 'not in', ids)
				.execute();
			const groups = new Map<string, OutboxRow[]>();
			for (const r of rows) groups.set(entityKey(r), [...(groups.get(entityKey(r)) ?? []), r]);
			let deferred = 0;
			for (const [key, group] of groups) {
				const first = BigInt(group[0].id);
				if (earlier.some((e) => entityKey(e) === key && BigInt(e.id) < first)) {
					groups.delete(key);
					deferred += group.length;
				}
			}
			if (groups.size === 0) return { rows: rows.length, applied: 0, failed: 0, deferred, stop: true };

			const markDone = async (done: OutboxRow[]) => {
				if (done.length) await trx.updateTable('searchOutbox').set({ doneAt: at, lastError: null }).where('id', 'in', done.map((r) => r.id)).execute();
			};
			const reschedule = async (failedRows: OutboxRow[], error: string) => {
				for (const r of failedRows) {
					const attempts = await trx
						.updateTable('searchOutbox')
						.set((eb) => ({ attempts: eb('attempts', '+', 1), lastError: error.slice(0, 2000) }))
						.where('id', '=', r.id)
						.returning('attempts')
						.executeTakeFirstOrThrow();
					await trx
						.updateTable('searchOutbox')
						.set({ nextAttemptAt: new Date(at.getTime() + backoffDelayMs(attempts.attempts)) })
						.where('id', '=', r.id)
						.execute();
				}
			};

			const all = [...groups.values()].flat();
			try {
				await applyGroups(engine, groups, options.loadDocuments);
				await markDone(all);
				return { rows: rows.length, applied: all.length, failed: 0, deferred, stop: false };
			} catch (e) {
				if (!(e instanceof SearchEngineError) || groups.size === 1) {
					await reschedule(all, message(e));
					return { rows: rows.length, applied: 0, failed: all.length, deferred, stop: true, error: message(e) };
				}
			}
			// The engine refused the batch (a bad document fails the whole task): apply entity by
			// entity so only the bad ones wait.
			let applied = 0;
			let failed = 0;
			let lastError: string | undefined;
			for (const [key, group] of groups) {
				try {
					await applyGroups(engine, new Map([[key, group]]), options.loadDocuments);
					await markDone(group);
					applied += group.length;
				} catch (e) {
					lastError = message(e);
					await reschedule(group, lastError);
					failed += group.length;
					if (!(e instanceof SearchEngineError)) break;
				}
			}
			return { rows: rows.length, applied, failed, deferred, stop: false, error: lastError };
		});
		result.applied += outcome.applied;
		result.failed += outcome.failed;
		result.deferred += outcome.deferred;
		if (outcome.error) result.error = outcome.error;
		if (outcome.stop || outcome.rows < batchSize) break;
	}
	return result;
}

export interface IndexLag {
	/** Rows not yet applied. */
	pending: number;
	/** Pending rows that have failed at least once. */
	failing: number;
	/** When the oldest pending row was written, or null when the index is up to date. */
	oldestPendingAt: Date | null;
	/** Seconds the index is behind the database (0 when up to date). */
	lagSeconds: number;
	lastError: string | null;
}

/**
 * How far the index is behind, for an admin status line: one organisation's changes when `orgId`
 * is given (what an organisation's admin is shown), otherwise across organisations on purpose
 * (the operator's view).
 */
export async function indexLag(db: Kysely<Database>, now: Date = new Date(), orgId?: string): Promise<IndexLag> {
	const row = await db
		.selectFrom('searchOutbox')
		.where('doneAt', 'is', null)
		.$if(orgId !== undefined, (qb) => qb.where('orgId', '=', orgId!))
		.select((eb) => [
			eb.fn.countAll<string>().as('pending'),
			eb.fn.count<string>('id').filterWhere('attempts', '>', 0).as('failing'),
			eb.fn.min('enqueuedAt').as('oldest')
		])
		.executeTakeFirstOrThrow();
	const last = await db
		.selectFrom('searchOutbox')
		.select('lastError')
		.where('doneAt', 'is', null)
		.$if(orgId !== undefined, (qb) => qb.where('orgId', '=', orgId!))
		.where('lastError', 'is not', null)
		.orderBy('id', 'desc')
		.limit(1)
		.executeTakeFirst();
	const oldest = row.oldest ? new Date(row.oldest as Date) : null;
	return {
		pending: Number(row.pending),
		failing: Number(row.failing),
		oldestPendingAt: oldest,
		lagSeconds: oldest ? Math.max(0, (now.getTime() - oldest.getTime()) / 1000) : 0,
		lastError: last?.lastError ?? null
	};
}

/** Deletes applied rows older than `before` (they are history only). Returns how many went. */
export async function purgeDoneOutbox(db: Kysely<Database>, before: Date): Promise<number> {
	const r = await db.deleteFrom('searchOutbox').where('doneAt', '<', before).executeTakeFirst();
	return Number(r.numDeletedRows);
}
