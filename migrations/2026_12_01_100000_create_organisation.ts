import { type Kysely, sql } from 'kysely';

// Migrations take Kysely<any> and import nothing from src/: they must keep working as the app changes.
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema
		.createTable('organisation')
		.addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
		.addColumn('slug', 'text', (c) => c.notNull().unique())
		.addColumn('name', 'text', (c) => c.notNull())
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addCheckConstraint('organisation_slug_format', sql`slug ~ '^[a-z0-9](?:[a-z0-9-]{0,38}[a-z0-9])?$'`)
		.addCheckConstraint('organisation_name_length', sql`char_length(name) between 1 and 120`)
		.execute();

	// Small key/value facts about this installation (e.g. when demo data was seeded).
	await db.schema
		.createTable('app_meta')
		.addColumn('key', 'text', (c) => c.primaryKey())
		.addColumn('value', 'jsonb', (c) => c.notNull())
		.addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('app_meta').execute();
	await db.schema.dropTable('organisation').execute();
}
