import { type Kysely, sql } from 'kysely';

// Migrations take Kysely<any> and import nothing from src/: they must keep working as the app changes.
export async function up(db: Kysely<any>): Promise<void> {
	// One row per change the search index must learn about, written in the same transaction as the
	// change itself. No foreign key to organisation: a deletion must still reach the index after
	// the organisation's rows are gone.
	await db.schema
		.createTable('search_outbox')
		.addColumn('id', 'bigserial', (c) => c.primaryKey())
		.addColumn('org_id', 'uuid', (c) => c.notNull())
		.addColumn('entity_id', 'text', (c) => c.notNull())
		.addColumn('op', 'text', (c) => c.notNull())
		.addColumn('enqueued_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('attempts', 'integer', (c) => c.notNull().defaultTo(0))
		.addColumn('last_error', 'text')
		.addColumn('next_attempt_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('done_at', 'timestamptz')
		.addCheckConstraint('search_outbox_op', sql`op in ('upsert', 'delete')`)
		.addCheckConstraint('search_outbox_attempts', sql`attempts >= 0`)
		.execute();
	// The worker's scan: pending rows, due first, in order.
	await db.schema
		.createIndex('search_outbox_pending')
		.on('search_outbox')
		.columns(['next_attempt_at', 'id'])
		.where(sql.ref('done_at'), 'is', null)
		.execute();
	// Ordering check per entity, and clean-up per organisation.
	await db.schema.createIndex('search_outbox_org_entity').on('search_outbox').columns(['org_id', 'entity_id', 'id']).execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('search_outbox').execute();
}
