import { type Kysely, sql } from 'kysely';
import type { Database } from '../db/connect';
import { enqueueSearchUpdate } from '../search/outbox';
import { findEntry, type Reader } from './queries';

/**
 * "This helped" marks and view counts: the popularity signal search ranks by. A mark is one row
 * per person per entry; `entry.helped_count` is recounted from those rows in the same transaction,
 * so it can neither drift nor be pumped by clicking twice. Both queue a search update, so the
 * entry's document carries the new count after the next drain. Neither touches `updated_at` or
 * the entry's version: a mark is not an edit.
 */

export interface HelpedState {
	/** Whether this person has marked the entry. */
	helped: boolean;
	/** How many people have. */
	helpedCount: number;
}

/** The reader's mark and the entry's count; undefined when the entry is not visible to them. */
export async function helpedState(db: Kysely<Database>, orgId: string, entryId: string, reader: Reader): Promise<HelpedState | undefined> {
	const entry = await findEntry(db, orgId, entryId, reader);
	if (!entry) return undefined;
	const mine = await db
		.selectFrom('entryHelped')
		.select('userId')
		.where('orgId', '=', orgId)
		.where('entryId', '=', entryId)
		.where('userId', '=', reader.userId)
		.executeTakeFirst();
	return { helped: mine !== undefined, helpedCount: entry.helpedCount };
}

/**
 * Sets (`helped: true`) or clears the reader's mark. Idempotent: marking twice counts once.
 * Undefined when the entry does not exist or the reader may not see it (the caller answers 404).
 */
export async function setHelped(
	db: Kysely<Database>,
	orgId: string,
	entryId: string,
	reader: Reader,
	helped: boolean
): Promise<HelpedState | undefined> {
	return db.transaction().execute(async (trx) => {
		// The lock serialises marks on one entry, so the recount below sees every committed mark.
		const entry = await findEntry(trx, orgId, entryId, reader);
		if (!entry) return undefined;
		await sql`select 1 from entry where id = ${entryId} and org_id = ${orgId} for update`.execute(trx);
		const changed = helped
			? (await trx
					.insertInto('entryHelped')
					.values({ orgId, entryId, userId: reader.userId })
					.onConflict((oc) => oc.columns(['entryId', 'userId']).doNothing())
					.executeTakeFirst()).numInsertedOrUpdatedRows
			: (await trx
					.deleteFrom('entryHelped')
					.where('orgId', '=', orgId)
					.where('entryId', '=', entryId)
					.where('userId', '=', reader.userId)
					.executeTakeFirst()).numDeletedRows;
		const row = await trx
			.updateTable('entry')
			.set({
				helpedCount: sql<number>`(select count(*)::int from entry_helped h where h.entry_id = ${entryId} and h.org_id = ${orgId})`
			})
			.where('id', '=', entryId)
			.where('orgId', '=', orgId)
			.returning('helpedCount')
			.executeTakeFirstOrThrow();
		if (Number(changed ?? 0) > 0) await enqueueSearchUpdate(trx, orgId, entryId, 'upsert');
		return { helped, helpedCount: row.helpedCount };
	});
}

/**
 * Counts one view of an entry the reader can see (the entry page calls it on load). Returns
 * whether it counted. The search document picks the count up with its next drain.
 */
export async function recordEntryView(db: Kysely<Database>, orgId: string, entryId: string): Promise<boolean> {
	return db.transaction().execute(async (trx) => {
		const r = await trx
			.updateTable('entry')
			.set((eb) => ({ viewCount: eb('viewCount', '+', 1) }))
			.where('id', '=', entryId)
			.where('orgId', '=', orgId)
			.where('deletedAt', 'is', null)
			.executeTakeFirst();
		if (Number(r.numUpdatedRows) === 0) return false;
		await enqueueSearchUpdate(trx, orgId, entryId, 'upsert');
		return true;
	});
}
