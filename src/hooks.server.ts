import type { Handle, HandleServerError, ServerInit } from '@sveltejs/kit';
import { building } from '$app/environment';
import { sequence } from '@sveltejs/kit/hooks';
import { authHandle } from './auth';
import { apiTokenHandle } from '$lib/server/auth/member';
import { matchIndexes, startDescriptorTailBackfill } from '$lib/server/match';
import { startEntrySearchSync } from '$lib/server/search/start';

/** Background work of the server process: the search index and the match indexes follow Postgres. */
export const init: ServerInit = () => {
	if (building) return;
	startEntrySearchSync();
	matchIndexes();
	startDescriptorTailBackfill();
};

/**
 * Sign-in links are requested only through the /login form, which validates the address and applies
 * the rate limit before Auth.js mails anything; a direct POST to Auth.js's endpoint would skip both.
 */
const onlyOurSignInForm: Handle = ({ event, resolve }) => {
	if (event.request.method === 'POST' && event.url.pathname.startsWith('/auth/signin')) {
		return new Response(null, { status: 303, headers: { location: '/login' } });
	}
	return resolve(event);
};

// apiTokenHandle: `Authorization: Bearer …` on /api/ routes sets the principal before any guard runs.
export const handle: Handle = sequence(onlyOurSignInForm, authHandle, apiTokenHandle);

export const handleError: HandleServerError = ({ error, event, status, message }) => {
	const errorId = crypto.randomUUID();
	if (status !== 404) {
		console.error(`[${errorId}] ${event.request.method} ${event.url.pathname}:`, error);
	}
	// Never show internal error text to people: the id lets a shop lead find the log line.
	return { message: status === 404 ? 'Not found' : message, errorId };
};
