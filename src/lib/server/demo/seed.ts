import type { Kysely } from 'kysely';
import { ensureUser } from '../auth/users';
import type { Database } from '../db/connect';
import { seedDemoEntries } from './entries';
import { seedDemoPhotos } from './photos';

/**
 * Demo data: an invented repair depot. Everything here is made up for the demo — the
 * organisation, its people, boards and faults — and is marked so wherever it appears.
 */
export const DEMO_ORGANISATION = {
	slug: 'fernhollow',
	name: 'Fernhollow Drive & Supply Repairs (demo)'
} as const;

/**
 * Invented demo people of the demo organisation, one per role worth trying. `.example` is a
 * reserved top-level domain, so these addresses can never reach a real inbox; locally their
 * sign-in mail lands in the developer mailbox.
 */
export const DEMO_USERS = [
	{ email: 'ilse.admin@fernhollow.example', name: 'Ilse Marrow (demo)', role: 'admin' },
	{ email: 'teodor.author@fernhollow.example', name: 'Teodor Quill (demo)', role: 'author' },
	{ email: 'pim.contributor@fernhollow.example', name: 'Pim Ashgrove (demo)', role: 'contributor' }
] as const;

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
		const organisation = await trx.insertInto('organisation').values(DEMO_ORGANISATION).returning('id').executeTakeFirstOrThrow();
		const users = [];
		for (const demo of DEMO_USERS) {
			const user = await ensureUser(trx, { email: demo.email, name: demo.name });
			users.push({ ...demo, id: user.id });
		}
		await trx
			.insertInto('membership')
			.values(users.map((u) => ({ orgId: organisation.id, userId: u.id, role: u.role })))
			.onConflict((oc) => oc.columns(['orgId', 'userId']).doNothing())
			.execute();
		const byRole = Object.fromEntries(users.map((u) => [u.role, u.id])) as Record<(typeof DEMO_USERS)[number]['role'], string>;
		await seedDemoEntries(trx, organisation.id, byRole);
		await seedDemoPhotos(trx, { id: organisation.id, slug: DEMO_ORGANISATION.slug }, byRole.author);
		await trx
			.insertInto('appMeta')
			.values({ key: 'demo_seeded_at', value: JSON.stringify(new Date().toISOString()) })
			.onConflict((oc) => oc.column('key').doNothing())
			.execute();
		return true;
	});
}
