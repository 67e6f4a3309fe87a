import { json } from '@sveltejs/kit';

/**
 * Stable error codes of the JSON API. Clients branch on `code`; `message` is for people.
 * Shape: `{ error: { code, message, issues? } }`.
 */
export type ApiErrorCode =
	| 'unauthenticated'
	| 'invalid_token'
	| 'forbidden'
	| 'not_found'
	| 'invalid_input'
	| 'conflict'
	| 'last_admin'
	| 'too_large'
	| 'invalid_capture'
	| 'invalid_transition'
	| 'search_unavailable'
	| 'invalid_photo'
	| 'invalid_bundle'
	| 'rate_limited';

export interface ApiIssue {
	path: string;
	message: string;
}

export function apiError(status: number, code: ApiErrorCode, message: string, issues?: ApiIssue[]): Response {
	return json({ error: issues ? { code, message, issues } : { code, message } }, { status, headers: { 'cache-control': 'no-store' } });
}

/** 429 `rate_limited` with the wait in `Retry-After` (whole seconds) and in the message. */
export function rateLimited(message: string, retryAfterSeconds: number): Response {
	const res = apiError(429, 'rate_limited', message);
	res.headers.set('retry-after', String(Math.max(1, Math.ceil(retryAfterSeconds))));
	return res;
}

/** zod issues as the API reports them: a dotted path and the message. */
export function toApiIssues(issues: readonly { path: readonly PropertyKey[]; message: string }[]): ApiIssue[] {
	return issues.map((i) => ({ path: i.path.map(String).join('.'), message: i.message }));
}

/** Reads a JSON body; undefined when it is not JSON or larger than `maxBytes`. */
export async function readJson(request: Request, maxBytes = 64 * 1024): Promise<unknown> {
	const text = await request.text();
	if (text.length > maxBytes) return undefined;
	try {
		return JSON.parse(text);
	} catch {
		return undefined;
	}
}
