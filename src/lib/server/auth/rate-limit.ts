import { createHash } from 'node:crypto';
import { type Kysely, sql } from 'kysely';
import type { Database } from '../db/connect';
import { normaliseEmail } from './users';

export type RateScope = 'address' | 'client';

export interface RateLimit {
	/** Most accepted link requests inside one window. */
	max: number;
	windowMinutes: number;
}

/**
 * How many sign-in links may be requested: per e-mail address (stops someone flooding a colleague's
 * inbox) and per client address (stops one machine spraying links at many addresses). A shop
 * behind one NAT shares the client limit, so it is four times the per-address one.
 */
export const SIGN_IN_LIMITS: Readonly<Record<RateScope, RateLimit>> = {
	address: { max: 5, windowMinutes: 15 },
	client: { max: 20, windowMinutes: 15 }
};

/** The limits with the per-window counts taken from configuration (same 15-minute windows). */
export function signInLimits(config: { SIGN_IN_LINKS_PER_ADDRESS: number; SIGN_IN_LINKS_PER_CLIENT: number }): Record<RateScope, RateLimit> {
	return {
		address: { ...SIGN_IN_LIMITS.address, max: config.SIGN_IN_LINKS_PER_ADDRESS },
		client: { ...SIGN_IN_LIMITS.client, max: config.SIGN_IN_LINKS_PER_CLIENT }
	};
}

export type RateDecision =
	| { allowed: true }
	| { allowed: false; scope: RateScope; retryAfterMinutes: number };

/** Hashes keep raw addresses out of the table; they are not secrets, only not stored verbatim. */
function keyHash(scope: RateScope, key: string): string {
	return createHash('sha256').update(`${scope}:${key}`).digest('hex');
}

/**
 * Decides whether one more sign-in link may be sent to `email` for a request from `client`, and
 * if so records it. Counting and recording happen in one transaction under advisory locks on both
 * keys, so concurrent requests on several app instances cannot all slip under the limit.
 * Call it before Auth.js creates a token or sends mail; a refused request records nothing.
 */
export async function admitSignInRequest(
	db: Kysely<Database>,
	request: { email: string; client: string; now?: Date },
	limits: Readonly<Record<RateScope, RateLimit>> = SIGN_IN_LIMITS
): Promise<RateDecision> {
	const now = request.now ?? new Date();
	const keys: { scope: RateScope; hash: string }[] = [
		{ scope: 'address', hash: keyHash('address', normaliseEmail(request.email)) },
		{ scope: 'client', hash: keyHash('client', request.client) }
	];
	return db.transaction().execute(async (trx) => {
		// Lock in a fixed order so two requests sharing one key cannot deadlock.
		for (const { hash } of [...keys].sort((a, b) => a.hash.localeCompare(b.hash))) {
			await sql`select pg_advisory_xact_lock(hashtextextended(${hash}, 0))`.execute(trx);
		}
		const longest = Math.max(limits.address.windowMinutes, limits.client.windowMinutes);
		await trx
			.deleteFrom('signInRequest')
			.where('requestedAt', '<', new Date(now.getTime() - longest * 60_000))
			.execute();

		for (const { scope, hash } of keys) {
			const { max, windowMinutes } = limits[scope];
			const since = new Date(now.getTime() - windowMinutes * 60_000);
			const rows = await trx
				.selectFrom('signInRequest')
				.select('requestedAt')
				.where('scope', '=', scope)
				.where('keyHash', '=', hash)
				.where('requestedAt', '>', since)
				.orderBy('requestedAt', 'desc')
				.limit(max)
				.execute();
			if (rows.length >= max) {
				// The oldest of the last `max` requests leaving the window frees the next slot.
				const frees = rows[rows.length - 1].requestedAt.getTime() + windowMinutes * 60_000;
				return { allowed: false, scope, retryAfterMinutes: Math.max(1, Math.ceil((frees - now.getTime()) / 60_000)) };
			}
		}
		await trx
			.insertInto('signInRequest')
			.values(keys.map(({ scope, hash }) => ({ scope, keyHash: hash, requestedAt: now })))
			.execute();
		return { allowed: true };
	});
}
