import { createHash, randomBytes } from 'node:crypto';

/**
 * Bearer secrets (API tokens, invitation links): 32 random bytes, base64url, behind a short kind
 * prefix so a leaked one is recognisable in logs and secret scanners.
 *
 * Stored as plain SHA-256, not a slow password hash: a slow hash defends guessable secrets that a
 * person chose, but these carry 256 bits from the OS random source, so no guess list exists, and a
 * fast deterministic hash lets every API request find its token through a unique index.
 */
export function generateSecret(kind: 'clt' | 'cli'): string {
	return `${kind}_${randomBytes(32).toString('base64url')}`;
}

export function hashSecret(secret: string): string {
	return createHash('sha256').update(secret, 'utf8').digest('hex');
}

/** A secret's shape; anything else is rejected before the database is asked. */
export function looksLikeSecret(value: string, kind: 'clt' | 'cli'): boolean {
	return new RegExp(`^${kind}_[A-Za-z0-9_-]{43}$`).test(value);
}
