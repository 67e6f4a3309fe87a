import { building } from '$app/environment';
import { sql } from 'kysely';
import { config } from '../env';
import { createDb } from './connect';

export type { Database } from './connect';

/**
 * The app's one Kysely instance, shared by every request. While `vite build` analyses the server
 * code there is no database, so a placeholder URL is used (a pg Pool connects only on first query).
 */
export const db = createDb(
	building ? 'postgres://build@127.0.0.1:1/none' : config().DATABASE_URL,
	{ max: building ? 1 : config().DATABASE_POOL_MAX }
);

if (!building) {
	// adapter-node emits this after it stops accepting connections (SIGINT/SIGTERM).
	process.once('sveltekit:shutdown', () => {
		void db.destroy();
	});
}

/** Whether the database answers, and the newest migration applied (null when none). */
export async function databaseStatus(): Promise<{ reachable: boolean; migration: string | null }> {
	try {
		const row = await sql<{ name: string | null }>`
			select (select name from kysely_migration order by name desc limit 1) as name
		`.execute(db);
		return { reachable: true, migration: row.rows[0]?.name ?? null };
	} catch (e) {
		// kysely_migration missing means reachable but never migrated.
		if (e instanceof Error && /kysely_migration/.test(e.message)) return { reachable: true, migration: null };
		return { reachable: false, migration: null };
	}
}
