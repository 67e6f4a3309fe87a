import { type Kysely, sql } from 'kysely';

/**
 * "This helped" marks: one per person per entry, so the count that ranks search results cannot be
 * pumped by clicking twice. `entry.helped_count` stays the denormalised count the search document
 * reads; the writer keeps both in step in one transaction.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema
		.createTable('entry_helped')
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('entry_id', 'uuid', (c) => c.notNull().references('entry.id').onDelete('cascade'))
		.addColumn('user_id', 'text', (c) => c.notNull().references('User.id').onDelete('cascade'))
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addPrimaryKeyConstraint('entry_helped_pkey', ['entry_id', 'user_id'])
		.execute();
	await db.schema.createIndex('entry_helped_org_entry_index').on('entry_helped').columns(['org_id', 'entry_id']).execute();
	await sql`alter table entry add constraint entry_helped_count_non_negative check (helped_count >= 0 and view_count >= 0)`.execute(db);
}

export async function down(db: Kysely<any>): Promise<void> {
	await sql`alter table entry drop constraint entry_helped_count_non_negative`.execute(db);
	await db.schema.dropTable('entry_helped').execute();
}
