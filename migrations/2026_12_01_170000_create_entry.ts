import { type Kysely, sql } from 'kysely';

/**
 * The knowledge base: entries (a fault signature written up), their revisions, the traces
 * (curves) attached to them, and photos. Tenant-scoped throughout: org_id on every row, indexes
 * leading on it. SI units in the database (V, Ω, Hz); prefixes are for display only.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema.createType('entry_status').asEnum(['draft', 'in_review', 'published', 'archived']).execute();

	await db.schema
		.createTable('entry')
		.addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('title', 'text', (c) => c.notNull())
		.addColumn('component_kind', 'text', (c) => c.notNull())
		.addColumn('part_number', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('package', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('assembly', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('test_point', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('symptom', 'text', (c) => c.notNull())
		.addColumn('symptom_detail', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('cause', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('fix', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('body', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('tags', sql`text[]`, (c) => c.notNull().defaultTo(sql`'{}'::text[]`))
		.addColumn('status', sql`entry_status`, (c) => c.notNull().defaultTo('draft'))
		.addColumn('author_id', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('reviewer_id', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('review_comment', 'text')
		.addColumn('version', 'integer', (c) => c.notNull().defaultTo(1))
		// Popularity signals for search ranking.
		.addColumn('view_count', 'integer', (c) => c.notNull().defaultTo(0))
		.addColumn('helped_count', 'integer', (c) => c.notNull().defaultTo(0))
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('submitted_at', 'timestamptz')
		.addColumn('published_at', 'timestamptz')
		.addColumn('deleted_at', 'timestamptz')
		.addColumn('deleted_by', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addCheckConstraint(
			'entry_component_kind',
			sql`component_kind in ('resistor', 'capacitor', 'electrolytic', 'inductor', 'diode', 'zener', 'transistor-junction', 'ic-pin', 'connector', 'other')`
		)
		.addCheckConstraint('entry_title_length', sql`char_length(title) between 1 and 160`)
		.addCheckConstraint('entry_symptom_length', sql`char_length(symptom) between 1 and 200`)
		.addCheckConstraint('entry_tags_count', sql`cardinality(tags) <= 20`)
		.addCheckConstraint('entry_version_positive', sql`version >= 1`)
		.execute();
	await db.schema.createIndex('entry_org_status_index').on('entry').columns(['org_id', 'status', 'updated_at']).execute();
	await db.schema.createIndex('entry_org_author_index').on('entry').columns(['org_id', 'author_id']).execute();
	await sql`create index entry_tags_index on entry using gin (tags)`.execute(db);

	await db.schema
		.createTable('entry_revision')
		.addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('entry_id', 'uuid', (c) => c.notNull().references('entry.id').onDelete('cascade'))
		.addColumn('version', 'integer', (c) => c.notNull())
		// Every editable field as saved in that version; the diff view compares two snapshots.
		.addColumn('snapshot', 'jsonb', (c) => c.notNull())
		.addColumn('saved_by', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('saved_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('note', 'text', (c) => c.notNull().defaultTo(''))
		.addUniqueConstraint('entry_revision_version_unique', ['entry_id', 'version'])
		.execute();
	await db.schema.createIndex('entry_revision_org_index').on('entry_revision').columns(['org_id', 'entry_id']).execute();

	await db.schema
		.createTable('trace')
		.addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		// Null for a query capture saved from the match screen and not yet attached to an entry.
		.addColumn('entry_id', 'uuid', (c) => c.references('entry.id').onDelete('cascade'))
		.addColumn('role', 'text', (c) => c.notNull())
		.addColumn('label', 'text', (c) => c.notNull().defaultTo(''))
		.addColumn('source_peak_v', 'double precision', (c) => c.notNull())
		.addColumn('source_resistance_ohm', 'double precision', (c) => c.notNull())
		.addColumn('frequency_hz', 'double precision', (c) => c.notNull())
		.addColumn('sense_ohm', 'double precision')
		.addColumn('simulated', 'boolean', (c) => c.notNull().defaultTo(false))
		// The device model of a simulated trace (our JSON), for provenance.
		.addColumn('model', 'jsonb')
		// The original file, kept as uploaded for provenance (null for simulated traces).
		.addColumn('file_name', 'text')
		.addColumn('file_format', 'text')
		.addColumn('file_bytes', 'integer')
		.addColumn('file_sha256', 'text')
		.addColumn('file_data', 'bytea')
		.addColumn('sample_count', 'integer', (c) => c.notNull())
		.addColumn('periods', 'integer', (c) => c.notNull())
		// One period on the canonical phase grid: { v: number[], i: number[] } in V and A.
		.addColumn('canonical', 'jsonb', (c) => c.notNull())
		.addColumn('descriptor', sql`real[]`, (c) => c.notNull())
		.addColumn('analysis', 'jsonb', (c) => c.notNull())
		.addColumn('class', 'text', (c) => c.notNull())
		.addColumn('residual', 'double precision', (c) => c.notNull())
		.addColumn('warnings', sql`text[]`, (c) => c.notNull().defaultTo(sql`'{}'::text[]`))
		.addColumn('created_by', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addCheckConstraint('trace_role', sql`role in ('fault', 'known-good', 'other', 'query')`)
		.addCheckConstraint('trace_query_unattached', sql`(role = 'query') = (entry_id is null)`)
		.addCheckConstraint('trace_conditions_positive', sql`source_peak_v > 0 and source_resistance_ohm > 0 and frequency_hz > 0`)
		.execute();
	await db.schema.createIndex('trace_org_entry_index').on('trace').columns(['org_id', 'entry_id']).execute();

	await db.schema
		.createTable('attachment')
		.addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('entry_id', 'uuid', (c) => c.notNull().references('entry.id').onDelete('cascade'))
		.addColumn('file_name', 'text', (c) => c.notNull())
		.addColumn('content_type', 'text', (c) => c.notNull())
		.addColumn('bytes', 'integer', (c) => c.notNull())
		.addColumn('sha256', 'text', (c) => c.notNull())
		.addColumn('data', 'bytea', (c) => c.notNull())
		.addColumn('created_by', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addCheckConstraint('attachment_content_type', sql`content_type in ('image/jpeg', 'image/png', 'image/webp')`)
		.execute();
	await db.schema.createIndex('attachment_org_entry_index').on('attachment').columns(['org_id', 'entry_id']).execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('attachment').execute();
	await db.schema.dropTable('trace').execute();
	await db.schema.dropTable('entry_revision').execute();
	await db.schema.dropTable('entry').execute();
	await db.schema.dropType('entry_status').execute();
}
