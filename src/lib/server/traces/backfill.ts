import { type Kysely, sql } from 'kysely';
import { descriptorTail } from '../../signature/compare';
import type { Database } from '../db/connect';
import { ENTRY_CHANGE_CHANNEL, type EntryChange } from '../entries/changes';
import { toCurve } from './service';

/** Traces computed per round trip: small enough to keep each transaction short. */
const BATCH = 500;

/**
 * Computes `descriptor_tail` for traces stored before the column existed (null: not computed
 * yet), from each trace's stored canonical curve with the engine's `descriptorTail`, so the match
 * index ranks them like new ones. Each batch commits with a NOTIFY per entry it touched, so every
 * app instance's match index re-reads those entries. Safe to run in several processes at once
 * (rows are claimed with SKIP LOCKED) and again at any time. Returns how many traces it filled.
 */
export async function backfillDescriptorTails(db: Kysely<Database>): Promise<number> {
	let total = 0;
	for (;;) {
		const done = await db.transaction().execute(async (trx) => {
			// Deliberately across organisations: this is maintenance of every tenant's rows, and it
			// reads and writes nothing but each row's own curve and tail.
			const rows = await trx
				.selectFrom('trace')
				.select(['id', 'orgId', 'entryId', 'canonical', 'sourcePeakV', 'sourceResistanceOhm', 'frequencyHz', 'periods', 'simulated'])
				.where('descriptorTail', 'is', null)
				.orderBy('id')
				.limit(BATCH)
				.forUpdate()
				.skipLocked()
				.execute();
			if (rows.length === 0) return 0;
			const tails = rows.map((r) => ({ id: r.id, tail: descriptorTail(toCurve(r)) }));
			await sql`
				update trace set descriptor_tail = t.tail
				from unnest(${sql.val(tails.map((t) => t.id))}::uuid[], ${sql.val(tails.map((t) => t.tail))}::real[]) as t(id, tail)
				where trace.id = t.id`.execute(trx);
			const changes = new Map<string, EntryChange>();
			for (const r of rows) if (r.entryId) changes.set(r.entryId, { orgId: r.orgId, entryId: r.entryId });
			for (const change of changes.values()) {
				await sql`select pg_notify(${ENTRY_CHANGE_CHANNEL}, ${JSON.stringify(change)})`.execute(trx);
			}
			return rows.length;
		});
		total += done;
		if (done < BATCH) return total;
	}
}
