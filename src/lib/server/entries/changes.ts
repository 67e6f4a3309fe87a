import { type Kysely, sql, type Transaction } from 'kysely';
import type { Database } from '../db/connect';
import { enqueueSearchUpdate, type OutboxOp } from '../search/outbox';

/** The channel on which every app instance hears that an entry or its traces changed. */
export const ENTRY_CHANGE_CHANNEL = 'curvelore_entry_change';

export interface EntryChange {
	orgId: string;
	entryId: string;
}

/**
 * Records that an entry (its fields, status or traces) changed, inside the writer's transaction:
 * a search-outbox row, and a NOTIFY that Postgres delivers to every listening app instance only
 * when the transaction commits (so the match indexes refresh in step, and never for a rollback).
 */
export async function recordEntryChange(
	trx: Transaction<Database> | Kysely<Database>,
	orgId: string,
	entryId: string,
	op: OutboxOp = 'upsert'
): Promise<void> {
	await enqueueSearchUpdate(trx, orgId, entryId, op);
	const payload: EntryChange = { orgId, entryId };
	await sql`select pg_notify(${ENTRY_CHANGE_CHANNEL}, ${JSON.stringify(payload)})`.execute(trx);
}
