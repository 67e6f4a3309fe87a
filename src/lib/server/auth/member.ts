import { getRequestEvent } from '$app/server';
import { error, type Handle } from '@sveltejs/kit';
import { db } from '../db';
import { apiError } from '../api/errors';
import { findMembership, findOrgBySlug, touchMembership, ACTIVITY_RESOLUTION_MS } from '../orgs/queries';
import { authenticateApiToken, type TokenPrincipal } from './api-tokens';
import { isApiPath, requireUser } from './guard';
import { type Action, can, lowerRole, type Role } from './permissions';
import { findUserById } from './users';

/** What the guard hands to every org-scoped load, action and endpoint. */
export interface MemberContext {
	userId: string;
	orgId: string;
	orgSlug: string;
	orgName: string;
	/** The role in effect for this request: the member's, lowered to the token's for API tokens. */
	role: Role;
	via: 'session' | 'token';
}

declare global {
	namespace App {
		interface Locals {
			/** The bearer token behind an API request, set by apiTokenHandle. */
			apiToken?: TokenPrincipal;
			/** Memberships the guard already loaded for this request, by organisation slug. */
			members?: Map<string, MemberContext | null>;
		}
	}
}

function deny(status: 403 | 404, pathname: string): never {
	const message =
		status === 404 ? 'Not found' : 'Your role in this organisation does not allow this. Ask an admin if you need it.';
	if (isApiPath(pathname)) {
		error(status, { message, error: { code: status === 404 ? 'not_found' : 'forbidden', message } });
	}
	error(status, message);
}

/**
 * The caller as a member of the organisation `orgSlug`, allowed to perform `action`, or the request
 * ends: signed out → as requireUser (redirect or 401); no such organisation, not a member, or an
 * API token for another organisation → 404 (so existence does not leak); member whose role lacks
 * the action → 403. The role is read from the database on every request, so a change or removal
 * takes effect at once. Call it first in every org-scoped load, action and endpoint.
 */
export async function requireMember(orgSlug: string, action: Action): Promise<MemberContext> {
	const event = getRequestEvent();
	const user = await requireUser();
	const cache = (event.locals.members ??= new Map());
	let member = cache.get(orgSlug);
	if (member === undefined) {
		member = await loadMember(orgSlug, user.id, event.locals.apiToken);
		cache.set(orgSlug, member);
	}
	if (!member) deny(404, event.url.pathname);
	if (!can(member.role, action)) deny(403, event.url.pathname);
	return member;
}

/**
 * Forgets the membership the guard loaded for `orgSlug` in this request, so the loads that run
 * after a form action that changed the organisation (its name) read it afresh.
 */
export function forgetMember(orgSlug: string): void {
	getRequestEvent().locals.members?.delete(orgSlug);
}

async function loadMember(orgSlug: string, userId: string, token: TokenPrincipal | undefined): Promise<MemberContext | null> {
	const org = await findOrgBySlug(db, orgSlug);
	if (!org) return null;
	// A token works only in the organisation it was made for.
	if (token && token.orgId !== org.id) return null;
	const membership = await findMembership(db, org.id, userId);
	if (!membership) return null;
	const now = new Date();
	if (!membership.lastActiveAt || now.getTime() - membership.lastActiveAt.getTime() > ACTIVITY_RESOLUTION_MS) {
		await touchMembership(db, org.id, userId, now);
	}
	return {
		userId,
		orgId: org.id,
		orgSlug: org.slug,
		orgName: org.name,
		role: token ? lowerRole(token.role, membership.role) : membership.role,
		via: token ? 'token' : 'session'
	};
}

const BEARER = /^Bearer\s+(\S+)\s*$/i;

/**
 * Authenticates `Authorization: Bearer …` on /api/ routes. A valid token sets the principal (the
 * token's owner) and `locals.apiToken`; a malformed, unknown or revoked one ends the request with
 * 401 `invalid_token` rather than falling back to the cookie, so a script never acts as someone
 * else by accident. Browsers send no such header, so form posts keep SvelteKit's Origin check.
 */
export const apiTokenHandle: Handle = async ({ event, resolve }) => {
	const header = event.request.headers.get('authorization');
	if (!header || !isApiPath(event.url.pathname)) return resolve(event);
	const presented = BEARER.exec(header)?.[1];
	const token = presented ? await authenticateApiToken(db, presented) : undefined;
	const user = token ? await findUserById(db, token.userId) : undefined;
	if (!token || !user) {
		return apiError(401, 'invalid_token', 'The API token is not valid: it may be mistyped or revoked. Create a new one on your profile page.');
	}
	event.locals.apiToken = token;
	event.locals.principal = { kind: 'token', user: { id: user.id, email: user.email, name: user.name } };
	return resolve(event);
};
