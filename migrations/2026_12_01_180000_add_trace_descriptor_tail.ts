import { type Kysely, sql } from 'kysely';

/**
 * Each trace's energy beyond its descriptor (mostly bench noise), which the match index adds to
 * the descriptor distance so it ranks like the exact distance. Rows from before this migration
 * keep 0, which ranks them exactly as before.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema
		.alterTable('trace')
		.addColumn('descriptor_tail', 'real', (c) => c.notNull().defaultTo(sql`0`))
		.execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.alterTable('trace').dropColumn('descriptor_tail').execute();
}
