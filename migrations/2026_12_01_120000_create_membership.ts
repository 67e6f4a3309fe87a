import { type Kysely, sql } from 'kysely';

/**
 * Who belongs to which organisation and with what role, invitations, personal API tokens and the
 * audit log. Every table here is tenant-scoped: it has org_id and an index leading on it.
 * Secrets (invitation links, API tokens) are stored only as SHA-256 hashes.
 */
export async function up(db: Kysely<any>): Promise<void> {
	// Lowest first; the app compares roles by this order (permissions.ts).
	await db.schema.createType('member_role').asEnum(['viewer', 'contributor', 'author', 'admin']).execute();

	await db.schema
		.createTable('membership')
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('user_id', 'text', (c) => c.notNull().references('User.id').onDelete('cascade'))
		.addColumn('role', sql`member_role`, (c) => c.notNull())
		.addColumn('joined_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('last_active_at', 'timestamptz')
		// The primary key leads on org_id, so it is also the tenant index.
		.addPrimaryKeyConstraint('membership_pkey', ['org_id', 'user_id'])
		.execute();
	// "Which organisations am I in" on every page.
	await db.schema.createIndex('membership_user_id_index').on('membership').column('user_id').execute();

	await db.schema
		.createTable('invitation')
		.addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('email', 'text', (c) => c.notNull())
		.addColumn('role', sql`member_role`, (c) => c.notNull())
		.addColumn('token_hash', 'text', (c) => c.notNull().unique())
		.addColumn('invited_by', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('last_sent_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('expires_at', 'timestamptz', (c) => c.notNull())
		.addColumn('accepted_at', 'timestamptz')
		.addColumn('accepted_by', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('revoked_at', 'timestamptz')
		.addCheckConstraint('invitation_email_form', sql`email = lower(email) and char_length(email) between 3 and 254`)
		.addCheckConstraint('invitation_one_outcome', sql`accepted_at is null or revoked_at is null`)
		.execute();
	await db.schema.createIndex('invitation_org_id_index').on('invitation').columns(['org_id', 'created_at']).execute();
	// At most one open invitation per address and organisation (expired ones are closed by the app first).
	await db.schema
		.createIndex('invitation_open_unique')
		.on('invitation')
		.columns(['org_id', 'email'])
		.unique()
		.where(sql.ref('accepted_at'), 'is', null)
		.where(sql.ref('revoked_at'), 'is', null)
		.execute();

	await db.schema
		.createTable('api_token')
		.addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		.addColumn('user_id', 'text', (c) => c.notNull().references('User.id').onDelete('cascade'))
		.addColumn('name', 'text', (c) => c.notNull())
		.addColumn('role', sql`member_role`, (c) => c.notNull())
		.addColumn('token_hash', 'text', (c) => c.notNull().unique())
		// The first characters of the token, shown so people can tell their tokens apart.
		.addColumn('prefix', 'text', (c) => c.notNull())
		.addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addColumn('last_used_at', 'timestamptz')
		.addColumn('revoked_at', 'timestamptz')
		.addCheckConstraint('api_token_name_length', sql`char_length(name) between 1 and 60`)
		.execute();
	await db.schema.createIndex('api_token_org_id_index').on('api_token').columns(['org_id', 'user_id']).execute();
	await db.schema.createIndex('api_token_user_id_index').on('api_token').column('user_id').execute();

	await db.schema
		.createTable('audit_log')
		.addColumn('id', 'bigint', (c) => c.primaryKey().generatedAlwaysAsIdentity())
		.addColumn('org_id', 'uuid', (c) => c.notNull().references('organisation.id').onDelete('cascade'))
		// Null once the acting user is deleted; details keep the name and address as they were.
		.addColumn('actor_id', 'text', (c) => c.references('User.id').onDelete('set null'))
		.addColumn('action', 'text', (c) => c.notNull())
		.addColumn('subject', 'text')
		.addColumn('details', 'jsonb', (c) => c.notNull().defaultTo(sql`'{}'::jsonb`))
		.addColumn('at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.execute();
	await db.schema
		.createIndex('audit_log_org_id_index')
		.on('audit_log')
		.expression(sql`org_id, at desc, id desc`)
		.execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('audit_log').execute();
	await db.schema.dropTable('api_token').execute();
	await db.schema.dropTable('invitation').execute();
	await db.schema.dropTable('membership').execute();
	await db.schema.dropType('member_role').execute();
}
