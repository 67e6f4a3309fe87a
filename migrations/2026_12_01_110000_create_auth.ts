import { type Kysely, sql } from 'kysely';

/**
 * Sign-in tables. "User", "Account", "Session" and "VerificationToken" are the shapes the Auth.js
 * Kysely adapter reads and writes: quoted PascalCase tables with camelCase columns, which it
 * queries without our CamelCasePlugin. Our own columns on "User" follow the same camelCase so the
 * table reads one way. sign_in_request is ours (snake_case) and backs the link-request rate limit.
 */
export async function up(db: Kysely<any>): Promise<void> {
	await db.schema
		.createTable('User')
		.addColumn('id', 'text', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()::text`))
		// The display name; Auth.js leaves it null for e-mail sign-in until the person sets one.
		.addColumn('name', 'text')
		.addColumn('email', 'text', (c) => c.notNull().unique())
		.addColumn('emailVerified', 'timestamptz')
		.addColumn('image', 'text')
		.addColumn('createdAt', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.addCheckConstraint('User_name_length', sql`name is null or char_length(name) between 1 and 80`)
		.addCheckConstraint('User_email_length', sql`char_length(email) between 3 and 254`)
		.execute();

	await db.schema
		.createTable('Account')
		.addColumn('id', 'text', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()::text`))
		.addColumn('userId', 'text', (c) => c.notNull().references('User.id').onDelete('cascade'))
		.addColumn('type', 'text', (c) => c.notNull())
		.addColumn('provider', 'text', (c) => c.notNull())
		.addColumn('providerAccountId', 'text', (c) => c.notNull())
		.addColumn('refresh_token', 'text')
		.addColumn('access_token', 'text')
		.addColumn('expires_at', 'integer')
		.addColumn('token_type', 'text')
		.addColumn('scope', 'text')
		.addColumn('id_token', 'text')
		.addColumn('session_state', 'text')
		.addUniqueConstraint('Account_provider_account', ['provider', 'providerAccountId'])
		.execute();
	await db.schema.createIndex('Account_userId_index').on('Account').column('userId').execute();

	await db.schema
		.createTable('Session')
		.addColumn('id', 'text', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()::text`))
		.addColumn('sessionToken', 'text', (c) => c.notNull().unique())
		.addColumn('userId', 'text', (c) => c.notNull().references('User.id').onDelete('cascade'))
		.addColumn('expires', 'timestamptz', (c) => c.notNull())
		.execute();
	await db.schema.createIndex('Session_userId_index').on('Session').column('userId').execute();

	await db.schema
		.createTable('VerificationToken')
		.addColumn('identifier', 'text', (c) => c.notNull())
		.addColumn('token', 'text', (c) => c.notNull())
		.addColumn('expires', 'timestamptz', (c) => c.notNull())
		.addPrimaryKeyConstraint('VerificationToken_pkey', ['identifier', 'token'])
		.execute();

	// One row per accepted sign-in link request. Keys are hashes, so the table holds no addresses.
	await db.schema
		.createTable('sign_in_request')
		.addColumn('id', 'bigint', (c) => c.primaryKey().generatedAlwaysAsIdentity())
		.addColumn('scope', 'text', (c) => c.notNull().check(sql`scope in ('address', 'client')`))
		.addColumn('key_hash', 'text', (c) => c.notNull())
		.addColumn('requested_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
		.execute();
	await db.schema
		.createIndex('sign_in_request_lookup')
		.on('sign_in_request')
		.columns(['scope', 'key_hash', 'requested_at'])
		.execute();
	await db.schema.createIndex('sign_in_request_age').on('sign_in_request').column('requested_at').execute();
}

export async function down(db: Kysely<any>): Promise<void> {
	await db.schema.dropTable('sign_in_request').execute();
	await db.schema.dropTable('VerificationToken').execute();
	await db.schema.dropTable('Session').execute();
	await db.schema.dropTable('Account').execute();
	await db.schema.dropTable('User').execute();
}
