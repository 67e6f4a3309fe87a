import { type Kysely, sql } from 'kysely';

/** Whether the database answers, and the newest migration applied (null when none). */
export async function databaseStatus(
	// eslint-disable-next-line @typescript-eslint/no-explicit-any
	db: Kysely<any>
): Promise<{ reachable: boolean; migration: string | null }> {
	try {
		const { rows } = await sql<{ name: string | null }>`
			select (select name from kysely_migration order by name desc limit 1) as name
		`.execute(db);
		return { reachable: true, migration: rows[0]?.name ?? null };
	} catch (e) {
		// 42P01: the migration table does not exist — reachable, but never migrated.
		if ((e as { code?: string }).code === '42P01') return { reachable: true, migration: null };
		return { reachable: false, migration: null };
	}
}
