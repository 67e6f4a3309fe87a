import type { Kysely } from 'kysely';
import type { Database } from '../db/connect';
import { authTables } from './tables';

/** A signed-up person as the app sees them. `name` is the display name, null until they set one. */
export interface AppUser {
	id: string;
	email: string;
	name: string | null;
	createdAt: Date;
}

const columns = ['id', 'email', 'name', 'createdAt'] as const;

/** Addresses are stored the way Auth.js normalises them: trimmed and lower-cased. */
export function normaliseEmail(email: string): string {
	return email.trim().toLowerCase();
}

/** The user with this id, or undefined. Users are global, not organisation-scoped. */
export async function findUserById(db: Kysely<Database>, id: string): Promise<AppUser | undefined> {
	return authTables(db).selectFrom('User').select(columns).where('id', '=', id).executeTakeFirst();
}

/** The user with this address (compared after normalising), or undefined. */
export async function findUserByEmail(db: Kysely<Database>, email: string): Promise<AppUser | undefined> {
	return authTables(db)
		.selectFrom('User')
		.select(columns)
		.where('email', '=', normaliseEmail(email))
		.executeTakeFirst();
}

/** Sets the display name (already validated: 1–80 characters). Returns the updated user, or undefined if gone. */
export async function updateDisplayName(
	db: Kysely<Database>,
	id: string,
	name: string
): Promise<AppUser | undefined> {
	return authTables(db)
		.updateTable('User')
		.set({ name })
		.where('id', '=', id)
		.returning(columns)
		.executeTakeFirst();
}

/**
 * Creates a user ahead of their first sign-in (demo seed, tests), or returns the existing one with
 * that address unchanged. Signing in with the address later finds this row.
 */
export async function ensureUser(
	db: Kysely<Database>,
	values: { email: string; name?: string | null }
): Promise<AppUser> {
	const email = normaliseEmail(values.email);
	const t = authTables(db);
	const inserted = await t
		.insertInto('User')
		.values({ id: crypto.randomUUID(), email, name: values.name ?? null })
		.onConflict((oc) => oc.column('email').doNothing())
		.returning(columns)
		.executeTakeFirst();
	return inserted ?? (await t.selectFrom('User').select(columns).where('email', '=', email).executeTakeFirstOrThrow());
}
