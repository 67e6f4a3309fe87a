import { type Kysely, sql } from 'kysely';

/**
 * The test conditions each member last matched with, per organisation, so the match screen opens
 * with the settings of their own bench. One row per (organisation, user); SI units.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema
		.createTable('match_preference')
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('user_id', 'text', (c) => c.notNull().references('User.id').onDelete('cascade'))
		.addColumn('source_peak_v', 'double precision', (c) => c.notNull())
		.addColumn('source_resistance_ohm', 'double precision', (c) => c.notNull())
		.addColumn('frequency_hz', 'double precision', (c) => c.notNull())
		.addColumn('sense_ohm', 'double precision')
		.addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addPrimaryKeyConstraint('match_preference_pkey', ['org_id', 'user_id'])
		.addCheckConstraint('match_preference_conditions_positive', sql`source_peak_v > 0 and source_resistance_ohm > 0 and frequency_hz > 0`)
		.addCheckConstraint('match_preference_sense_positive', sql`sense_ohm is null or sense_ohm > 0`)
		.execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('match_preference').execute();
}
