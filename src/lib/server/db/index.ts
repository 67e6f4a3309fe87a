import { building } from '$app/environment';
import { config } from '../env';
import { createDb } from './connect';
import { databaseStatus } from './status';

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

/** Whether the app's database answers, and the newest migration applied. */
export function appDatabaseStatus() {
	return databaseStatus(db);
}
