import { getRequestEvent } from '$app/server';
import { error, redirect, type RequestEvent } from '@sveltejs/kit';

/** The signed-in person as every guard returns them. */
export interface SignedInUser {
	id: string;
	email: string;
	/** Display name; null until they set one on the profile page. */
	name: string | null;
}

/**
 * Who is making this request. A browser session yields `kind: 'session'`; other authentication
 * (API tokens) sets `locals.principal` itself, before any guard runs, with its own kind.
 */
export interface Principal {
	kind: 'session' | 'token';
	user: SignedInUser;
}

/** JSON routes answer signed-out callers with 401 instead of a redirect to the sign-in page. */
export function isApiPath(pathname: string): boolean {
	return pathname === '/api' || pathname.startsWith('/api/');
}

/** The principal behind the request, or undefined when nobody is signed in. Cached on locals. */
export async function currentPrincipal(event: RequestEvent = getRequestEvent()): Promise<Principal | undefined> {
	if (event.locals.principal) return event.locals.principal;
	const session = await event.locals.auth();
	const user = session?.user;
	if (!user?.id || !user.email) return undefined;
	event.locals.principal = { kind: 'session', user: { id: user.id, email: user.email, name: user.name ?? null } };
	return event.locals.principal;
}

/**
 * The signed-in user, or the request ends here: pages redirect (303) to the sign-in page with a
 * way back, API routes answer 401 with `{ error: { code: 'unauthenticated', message } }`.
 * Call it first in every load, action and endpoint that needs a person.
 */
export async function requireUser(): Promise<SignedInUser> {
	const event = getRequestEvent();
	const principal = await currentPrincipal(event);
	if (principal) return principal.user;
	if (isApiPath(event.url.pathname)) {
		const message = 'Sign in, or send an API token in the Authorization header.';
		error(401, { message, error: { code: 'unauthenticated', message } });
	}
	const back = `${event.url.pathname}${event.url.search}`;
	redirect(303, `/login?redirectTo=${encodeURIComponent(back)}`);
}

// Organisation membership and API tokens live beside this file; every guard is imported from here.
export { forgetMember, requireMember, type MemberContext } from './member';
