import type { Database as AdapterDatabase } from '@auth/kysely-adapter';
import type { Kysely } from 'kysely';
import type { Database } from '../db/connect';
import type { DB } from '../db/schema';

/**
 * The Auth.js tables are quoted PascalCase with camelCase columns ("User"."emailVerified"), while
 * the app's CamelCasePlugin would snake-case every identifier ("email_verified"). So these tables
 * are always reached through the plugin-free view of the same pool, typed to match what is really
 * in SQL. The generated User/Session/VerificationToken interfaces already name the real columns;
 * "Account" keeps Auth.js's snake_case OAuth columns and is only touched by the adapter.
 */
export type AuthTables = Pick<DB, 'User' | 'Session' | 'VerificationToken'>;

/** Our own reads and writes of "User", "Session", "VerificationToken". */
export function authTables(db: Kysely<Database>): Kysely<AuthTables> {
	return db.withoutPlugins() as unknown as Kysely<AuthTables>;
}

/** The instance handed to KyselyAdapter, typed with the adapter's own table interface. */
export function adapterDb(db: Kysely<Database>): Kysely<AdapterDatabase> {
	return db.withoutPlugins() as unknown as Kysely<AdapterDatabase>;
}
