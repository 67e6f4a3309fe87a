import { sql, type Kysely } from 'kysely';
import { createDb, type Database } from '../../src/lib/server/db/connect';

/** The test database URL; `npm test` points DATABASE_URL at a database it wipes each run. */
export function testDatabaseUrl(): string {
	const url = process.env.DATABASE_URL;
	if (!url) throw new Error('DATABASE_URL is not set: run integration tests through `npm test`.');
	if (!/test/.test(new URL(url).pathname) && !process.env.TEST_DATABASE_URL) {
		throw new Error(`Refusing to run integration tests against ${url}: its name does not contain "test".`);
	}
	return url;
}

export function openTestDb(): Kysely<Database> {
	return createDb(testDatabaseUrl(), { max: 4 });
}

/** Empties every application table (not the migration records), so each test starts clean. */
export async function truncateAll(db: Kysely<Database>): Promise<void> {
	const { rows } = await sql<{ name: string }>`
		select quote_ident(tablename) as name from pg_tables
		where schemaname = 'public' and tablename not like 'kysely_migration%'
	`.execute(db);
	if (rows.length === 0) return;
	await sql.raw(`truncate ${rows.map((r) => r.name).join(', ')} restart identity cascade`).execute(db);
}
