/**
 * Turns an untrusted "where to go after sign-in" value into a path on this site, or `fallback`.
 * Only same-origin absolute paths pass: no scheme, no host, no protocol-relative `//host`, no
 * backslashes (browsers treat `/\host` as `//host`), no control characters, and nothing under
 * Auth.js's own `/auth/` routes. Pure, so it can be tested without a server.
 */
export function safeRedirectPath(raw: unknown, fallback = '/'): string {
	if (typeof raw !== 'string' || raw.length === 0 || raw.length > 2000) return fallback;
	// eslint-disable-next-line no-control-regex
	if (/[\u0000-\u001f\u007f\\]/.test(raw)) return fallback;
	if (!raw.startsWith('/') || raw.startsWith('//')) return fallback;
	let parsed: URL;
	try {
		parsed = new URL(raw, 'http://same-origin.invalid');
	} catch {
		return fallback;
	}
	if (parsed.origin !== 'http://same-origin.invalid') return fallback;
	const path = `${parsed.pathname}${parsed.search}${parsed.hash}`;
	if (path === '/auth' || path.startsWith('/auth/') || path.startsWith('/login')) return fallback;
	return path;
}

/** The same check for a full URL Auth.js hands us (its callbackUrl): same origin, safe path. */
export function safeRedirectUrl(raw: string, origin: string, fallback = '/'): string {
	let parsed: URL;
	try {
		parsed = new URL(raw, origin);
	} catch {
		return new URL(fallback, origin).href;
	}
	if (parsed.origin !== new URL(origin).origin) return new URL(fallback, origin).href;
	return new URL(safeRedirectPath(`${parsed.pathname}${parsed.search}${parsed.hash}`, fallback), origin).href;
}
