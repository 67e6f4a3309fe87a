import type { Kysely } from 'kysely';
import type { Database } from '../db/connect';

/**
 * Demo data: an invented repair depot. Everything here is made up for the demo — the
 * organisation, its people, boards and faults — and is marked so wherever it appears.
 */
export const DEMO_ORGANISATION = {
	slug: 'fernhollow',
	name: 'Fernhollow Drive & Supply Repairs (demo)'
} as const;

/**
 * Seeds the demo organisation when the database holds no organisation at all, so running it
 * again, or against a database people already use, changes nothing. Returns whether it seeded.
 */
export async function seedDemo(db: Kysely<Database>): Promise<boolean> {
	return db.transaction().execute(async (trx) => {
		// Serialise concurrent seeders (two starts racing) on a transaction-scoped advisory lock.
		await trx.selectNoFrom((eb) => eb.fn('pg_advisory_xact_lock', [eb.lit(424242)]).as('l')).execute();
		const existing = await trx
			.selectFrom('organisation')
			.select((eb) => eb.fn.countAll<number>().as('n'))
			.executeTakeFirstOrThrow();
		if (Number(existing.n) > 0) return false;
		await trx.insertInto('organisation').values(DEMO_ORGANISATION).execute();
		await trx
			.insertInto('appMeta')
			.values({ key: 'demo_seeded_at', value: JSON.stringify(new Date().toISOString()) })
			.onConflict((oc) => oc.column('key').doNothing())
			.execute();
		return true;
	});
}
