import { CamelCasePlugin, Kysely, PostgresDialect } from 'kysely';
import pg from 'pg';
import type { DB } from './schema';

export type Database = DB;

export interface PoolSettings {
	/** Most connections this process opens (default 10). */
	max?: number;
}

/**
 * Creates a Kysely instance over a pg Pool. The app makes exactly one (db/index.ts); scripts and
 * tests make their own. Our tables are snake_case in SQL and camelCase in TypeScript.
 */
export function createDb(connectionString: string, settings: PoolSettings = {}): Kysely<Database> {
	const pool = new pg.Pool({
		connectionString,
		max: settings.max ?? 10,
		idleTimeoutMillis: 30_000,
		// Fail a request quickly when the database is down instead of hanging it.
		connectionTimeoutMillis: 5_000
	});
	// An idle client losing its connection (server restart) must not crash the process.
	pool.on('error', (err) => console.error('database pool error:', err.message));
	return new Kysely<Database>({
		dialect: new PostgresDialect({ pool }),
		plugins: [new CamelCasePlugin()]
	});
}
