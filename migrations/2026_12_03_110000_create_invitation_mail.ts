import { type Kysely, sql } from 'kysely';

/**
 * One row per invitation e-mail sent (the first one and every resend), so the app can limit how
 * often an invitation is resent and how many invitation mails an organisation sends per hour,
 * the same on every app instance. Rows older than the longest window are deleted by the app.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema
		.createTable('invitation_mail')
		.addColumn('id', 'bigint', (c) => c.primaryKey().generatedAlwaysAsIdentity())
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('invitation_id', 'uuid', (c) => c.notNull().references('invitation.id').onDelete('cascade'))
		.addColumn('kind', 'text', (c) => c.notNull())
		.addColumn('sent_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addCheckConstraint('invitation_mail_kind', sql`kind in ('invite', 'resend')`)
		.execute();
	// The per-organisation hourly count, and the clean-up of old rows.
	await db.schema.createIndex('invitation_mail_org_id_index').on('invitation_mail').columns(['org_id', 'sent_at']).execute();
	// The per-invitation interval and daily count.
	await db.schema.createIndex('invitation_mail_invitation_index').on('invitation_mail').columns(['invitation_id', 'sent_at']).execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('invitation_mail').execute();
}
