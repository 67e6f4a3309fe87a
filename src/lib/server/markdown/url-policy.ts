/**
 * Which URLs an entry's Markdown may point at. Decisions are made on the URL as a browser would
 * parse it (WHATWG URL, the same algorithm Node implements), so tricks such as tabs or newlines
 * inside a scheme (`java\tscript:`), upper case, or backslashes for slashes are seen through rather
 * than pattern-matched.
 */

// A base nobody can own (`.invalid` is reserved, RFC 6761): parsing against it tells relative
// references (same origin as the base) apart from absolute ones.
const BASE = 'http://relative.invalid';
const BASE_ORIGIN = new URL(BASE).origin;

export type LinkTarget =
	/** Same site: a path, query or fragment relative to the page. `href` is what was written. */
	| { kind: 'internal'; href: string }
	/** Another site over http or https. `href` is the normalised absolute URL. */
	| { kind: 'external'; href: string }
	| { kind: 'mailto'; href: string };

/**
 * Classifies a link target, or returns `null` when it must not become a link: any scheme other
 * than http, https and mailto (javascript:, data:, vbscript:, file:, …) and anything unparsable.
 */
export function classifyHref(raw: string): LinkTarget | null {
	const written = raw.trim();
	if (written === '') return null;
	let url: URL;
	try {
		url = new URL(written, BASE);
	} catch {
		return null;
	}
	if (url.protocol === 'mailto:') return { kind: 'mailto', href: url.href };
	if (url.protocol !== 'http:' && url.protocol !== 'https:') return null;
	const hasScheme = /^[a-z][a-z0-9+.-]*:/i.test(stripTabsAndNewlines(written));
	if (url.origin === BASE_ORIGIN) {
		// "http:path" (a scheme but no host) resolves against the page in a browser-specific way;
		// nobody writes it on purpose, so it is not a link.
		return hasScheme ? null : { kind: 'internal', href: written };
	}
	return { kind: 'external', href: url.href };
}

/**
 * The image source to emit, or `null` when the image is not one of our own attachments. Only
 * root-relative paths that still sit under `prefix` after resolving `.`/`..` segments (including
 * percent-encoded ones) are accepted; the result is the resolved path and query, so what the
 * browser requests is exactly what was checked.
 */
export function allowedImageSrc(raw: string, prefix: string | undefined): string | null {
	if (!prefix) return null;
	const written = stripTabsAndNewlines(raw.trim());
	// Root-relative only: "//host" and "/\host" name another host, and page-relative paths depend
	// on where the entry is shown.
	if (!written.startsWith('/') || written.startsWith('//') || written.startsWith('/\\')) return null;
	let url: URL;
	try {
		url = new URL(written, BASE);
	} catch {
		return null;
	}
	if (url.origin !== BASE_ORIGIN) return null;
	const root = normalisePrefix(prefix);
	if (!url.pathname.startsWith(root) || url.pathname.length === root.length) return null;
	return url.pathname + url.search;
}

/** `/o/acme/attachments` and `/o/acme/attachments/` mean the same folder. */
export function normalisePrefix(prefix: string): string {
	const withLead = prefix.startsWith('/') ? prefix : `/${prefix}`;
	return withLead.endsWith('/') ? withLead : `${withLead}/`;
}

// The URL parser removes ASCII tab and newline anywhere in the input (WHATWG URL, "basic URL parser").
function stripTabsAndNewlines(s: string): string {
	return s.replace(/[\t\n\r]/g, '');
}
