import { type Kysely, sql } from 'kysely';

/**
 * The review conversation of an entry: one row per status change (submitted, sent back with a
 * comment, published, archived, reopened), written in the same transaction as the change.
 * `entry.review_comment` stays the denormalised latest send-back comment that the entry page,
 * the editor, mails and bundles read.
 *
 * The id is an identity, not a uuid: events are inserted while the entry row is locked, so the id
 * orders one entry's events exactly as they happened, even when two share a millisecond or two
 * app servers' clocks disagree.
 *
 * The foreign key runs over (org_id, entry_id), so an event can never belong to an entry of
 * another organisation.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await sql`alter table entry add constraint entry_org_id_unique unique (org_id, id)`.execute(db);
	await db.schema
		.createTable('entry_review_event')
		.addColumn('id', 'bigint', (c) => c.primaryKey().generatedAlwaysAsIdentity())
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('entry_id', 'uuid', (c) => c.notNull())
		// Null once the person's account is gone; the event itself stays.
		.addColumn('actor_id', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('transition', 'text', (c) => c.notNull())
		.addColumn('from_status', sql`entry_status`, (c) => c.notNull())
		.addColumn('to_status', sql`entry_status`, (c) => c.notNull())
		.addColumn('comment', 'text')
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addForeignKeyConstraint('entry_review_event_entry_fkey', ['org_id', 'entry_id'], 'entry', ['org_id', 'id'], (fk) => fk.onDelete('cascade'))
		.addCheckConstraint('entry_review_event_transition', sql`transition in ('submit', 'publish', 'return', 'archive', 'reopen')`)
		.addCheckConstraint('entry_review_event_comment_length', sql`comment is null or char_length(comment) between 1 and 2000`)
		.addCheckConstraint('entry_review_event_return_comment', sql`transition <> 'return' or comment is not null`)
		.execute();
	await db.schema.createIndex('entry_review_event_org_entry_index').on('entry_review_event').columns(['org_id', 'entry_id', 'id']).execute();
	await db.schema.createIndex('entry_review_event_actor_index').on('entry_review_event').column('actor_id').execute();

	// Nothing is lost: each stored latest comment becomes a "sent back" event. The moment it was
	// written was not kept; it lies after the submission and before the first save that followed
	// it (or the last update), so the earliest of those is the closest known bound.
	await sql`
		insert into entry_review_event (org_id, entry_id, actor_id, transition, from_status, to_status, comment, created_at)
		select e.org_id, e.id, e.reviewer_id, 'return', 'in_review', 'draft', left(btrim(e.review_comment), 2000),
			least(
				e.updated_at,
				(select min(r.saved_at) from entry_revision r where r.entry_id = e.id and r.org_id = e.org_id and r.saved_at > coalesce(e.submitted_at, e.created_at))
			)
		from entry e
		where e.review_comment is not null and btrim(e.review_comment) <> ''
		order by coalesce(e.submitted_at, e.created_at), e.id
	`.execute(db);
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('entry_review_event').execute();
	await sql`alter table entry drop constraint entry_org_id_unique`.execute(db);
}
