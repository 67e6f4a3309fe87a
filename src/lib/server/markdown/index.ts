/**
 * Entry Markdown → safe HTML, on the server.
 *
 * Policy: Markdown is stored as written and rendered + sanitised every time it is shown. Stored
 * HTML is never trusted, so a fix to the sanitiser or a library upgrade protects every old entry at
 * once, with no migration. Rendering is cheap enough to do per request (see
 * tests/bench/markdown.bench.ts); a small in-process LRU keyed by the source's hash, the options
 * and the library versions saves the repeat work on busy entries.
 *
 * Three layers, each enough on its own for the dangerous cases:
 * 1. marked renders Markdown with raw HTML *escaped*: `<b>` in an entry shows as the text `<b>`.
 *    No HTML a writer types ever becomes an element.
 * 2. DOMPurify (isomorphic-dompurify: jsdom on the server, see purifier.ts) keeps only an
 *    allow-list of elements and attributes, and only http/https/mailto/relative URLs.
 * 3. A final pass over the sanitised DOM applies our own rules: links are re-checked with the WHATWG
 *    URL parser (url-policy.ts) and unwrapped to their text when refused; external links get
 *    rel="noopener noreferrer nofollow"; images must be our own attachments under the given path
 *    prefix, or they become their alt text; `class` survives only as `language-*` on code.
 *
 * Headings are shifted down one level (`#` → h2, clamped at h6): the entry page owns the h1.
 */
import { Marked, type Tokens } from 'marked';
import { createHash } from 'node:crypto';
import { createRequire } from 'node:module';
import { StringLru } from './lru';
import { currentPurifier, purifierVersion } from './purifier';
import { allowedImageSrc, classifyHref } from './url-policy';

export interface MarkdownOptions {
	/**
	 * Root-relative path under which the organisation's photos live: `photoUrlPrefix(org)` from
	 * `$lib/photos/urls`, e.g. `/api/v1/orgs/fernhollow/photos/`. Images elsewhere (other sites, data: URLs, other
	 * organisations) are shown as their alt text. Without a prefix no image is shown.
	 */
	attachmentPrefix?: string;
}

/** Bump when the rendering rules change, so cached output made under the old rules is not reused. */
const RULES_VERSION = 1;
// Read with require: a JSON import left external by the server build would need an import
// attribute under Node's ESM loader.
const markedVersion = (createRequire(import.meta.url)('marked/package.json') as { version: string }).version;
const VERSION_KEY = `rules ${RULES_VERSION}; marked ${markedVersion}; dompurify ${purifierVersion}`;

const BLOCK_TAGS = [
	'h2',
	'h3',
	'h4',
	'h5',
	'h6',
	'p',
	'br',
	'hr',
	'blockquote',
	'pre',
	'ul',
	'ol',
	'li',
	'table',
	'thead',
	'tbody',
	'tr',
	'th',
	'td',
	'img'
];
const INLINE_TAGS = ['a', 'em', 'strong', 'del', 'code'];

const PURIFY_BASE = {
	ALLOWED_ATTR: ['href', 'src', 'alt', 'title', 'align', 'start', 'class'],
	// DOMPurify's default pattern narrowed to our schemes: a scheme must be http, https or mailto;
	// anything without a scheme (relative) passes to the stricter check of the final pass.
	ALLOWED_URI_REGEXP: /^(?:(?:https?|mailto):|[^a-z]|[a-z+.-]+(?:[^a-z+.\-:]|$))/i,
	ALLOW_DATA_ATTR: false,
	ALLOW_ARIA_ATTR: false,
	ALLOW_UNKNOWN_PROTOCOLS: false,
	RETURN_DOM: true as const
};
const PURIFY_BLOCK = { ...PURIFY_BASE, ALLOWED_TAGS: [...BLOCK_TAGS, ...INLINE_TAGS] };
const PURIFY_INLINE = { ...PURIFY_BASE, ALLOWED_TAGS: INLINE_TAGS };

function escapeHtml(text: string): string {
	return text
		.replace(/&/g, '&amp;')
		.replace(/</g, '&lt;')
		.replace(/>/g, '&gt;')
		.replace(/"/g, '&quot;')
		.replace(/'/g, '&#39;');
}

const blockMarked = new Marked({
	gfm: true,
	breaks: false,
	renderer: {
		heading({ tokens, depth }: Tokens.Heading) {
			const level = Math.min(depth + 1, 6);
			return `<h${level}>${this.parser.parseInline(tokens)}</h${level}>\n`;
		},
		html({ text, block }: Tokens.HTML | Tokens.Tag) {
			// Shown as written, never interpreted.
			return block ? `<p>${escapeHtml(text.trim())}</p>\n` : escapeHtml(text);
		},
		// A task list box as a character rather than a form control (no input elements at all).
		checkbox({ checked }: Tokens.Checkbox) {
			return checked ? '☑ ' : '☐ ';
		}
	}
});

const inlineMarked = new Marked({
	gfm: true,
	breaks: false,
	renderer: {
		html({ text }: Tokens.HTML | Tokens.Tag) {
			return escapeHtml(text);
		},
		image({ text }: Tokens.Image) {
			return escapeHtml(text);
		}
	}
});

type Body = HTMLElement;

function sanitiseToBody(html: string, inline: boolean): Body {
	const purifier = currentPurifier();
	const body = purifier.sanitize(html, inline ? PURIFY_INLINE : PURIFY_BLOCK) as unknown as Body | null;
	// A document that parses without a body (a <frameset>) has nothing to keep.
	return body ?? (purifier.sanitize('', PURIFY_BLOCK) as unknown as Body);
}

/** Our own rules, applied to DOMPurify's output (layer 3 above). */
function enforceRules(body: Body, options: MarkdownOptions): void {
	const doc = body.ownerDocument;
	for (const a of Array.from(body.getElementsByTagName('a'))) {
		const target = classifyHref(a.getAttribute('href') ?? '');
		if (!target) {
			a.replaceWith(...Array.from(a.childNodes));
			continue;
		}
		a.setAttribute('href', target.href);
		if (target.kind === 'external') a.setAttribute('rel', 'noopener noreferrer nofollow');
	}
	for (const img of Array.from(body.getElementsByTagName('img'))) {
		const src = allowedImageSrc(img.getAttribute('src') ?? '', options.attachmentPrefix);
		if (src === null) img.replaceWith(doc.createTextNode(img.getAttribute('alt') ?? ''));
		else img.setAttribute('src', src);
	}
	// getElementsByTagName rather than selectors: jsdom's selector engine is the slow part here.
	for (const el of Array.from(body.getElementsByTagName('*'))) {
		if (!el.hasAttribute('class')) continue;
		const keep =
			el.tagName === 'CODE' && /^language-[A-Za-z0-9_+-]{1,40}$/.test(el.getAttribute('class') ?? '');
		if (!keep) el.removeAttribute('class');
	}
}

/**
 * Sanitises HTML that did not come from our Markdown renderer (layers 2 and 3 only) with the same
 * allow-list and URL rules as entry bodies. Also what the tests use to prove those layers hold on
 * their own, should the escaping in layer 1 ever fail.
 */
export function sanitiseHtml(html: string, options: MarkdownOptions = {}): string {
	const body = sanitiseToBody(html, false);
	enforceRules(body, options);
	return body.innerHTML;
}

function renderBlockBody(markdown: string, options: MarkdownOptions): Body {
	const html = blockMarked.parse(markdown, { async: false });
	const body = sanitiseToBody(html, false);
	enforceRules(body, options);
	return body;
}

const cache = new StringLru(500, 8_000_000);

function cached(kind: string, markdown: string, options: MarkdownOptions, make: () => string): string {
	const key = createHash('sha256')
		.update(`${VERSION_KEY}\0${kind}\0${options.attachmentPrefix ?? ''}\0${markdown}`)
		.digest('base64');
	const hit = cache.get(key);
	if (hit !== undefined) return hit;
	const value = make();
	cache.set(key, value);
	return value;
}

/**
 * Renders an entry body (block Markdown) to sanitised HTML, safe to place with `{@html}`.
 * Headings start at h2. Results are cached per (source, options, library versions).
 */
export function renderMarkdown(markdown: string, options: MarkdownOptions = {}): string {
	return cached('block', markdown, options, () => renderMarkdownUncached(markdown, options));
}

/** `renderMarkdown` without the cache; for benchmarks and tests of the cache itself. */
export function renderMarkdownUncached(markdown: string, options: MarkdownOptions = {}): string {
	return renderBlockBody(markdown, options).innerHTML;
}

/**
 * Renders a one-line field (a symptom) to sanitised inline HTML: emphasis, code, strike-through
 * and links only. Line breaks become spaces and images become their alt text.
 */
export function renderInline(markdown: string, options: MarkdownOptions = {}): string {
	return cached('inline', markdown, options, () => {
		const html = inlineMarked.parseInline(markdown.replace(/\r?\n|\r/g, ' '), { async: false });
		const body = sanitiseToBody(html, true);
		enforceRules(body, options);
		return body.innerHTML;
	});
}

const TEXT_BLOCKS = new Set([
	'H2', 'H3', 'H4', 'H5', 'H6', 'P', 'PRE', 'BLOCKQUOTE', 'UL', 'OL', 'LI', 'TABLE', 'THEAD',
	'TBODY', 'TR', 'HR'
]);

// Containers whose whitespace-only text is just the renderer's line breaks between children.
const STRUCTURAL = new Set(['TABLE', 'THEAD', 'TBODY', 'TR', 'UL', 'OL']);

function collectText(node: Node, out: string[]): void {
	const structural = STRUCTURAL.has((node as Element).tagName);
	for (const child of Array.from(node.childNodes)) {
		if (child.nodeType === 3) {
			const text = child.nodeValue ?? '';
			if (!(structural && text.trim() === '')) out.push(text);
			continue;
		}
		if (child.nodeType !== 1) continue;
		const el = child as Element;
		if (el.tagName === 'BR') {
			out.push('\n');
			continue;
		}
		if (el.tagName === 'IMG') {
			out.push(el.getAttribute('alt') ?? '');
			continue;
		}
		const block = TEXT_BLOCKS.has(el.tagName);
		if (block) out.push('\n');
		collectText(el, out);
		if (block) out.push('\n');
		else if (el.tagName === 'TD' || el.tagName === 'TH') out.push('\t');
	}
}

/**
 * The words of an entry body as plain text, for the search index: no markup, entities decoded,
 * link targets dropped (their text kept), images as their alt text, one block (paragraph, list
 * item, table row, code line) per line and table cells separated by tabs. Raw HTML in the source stays as the literal text it is shown as.
 */
export function stripMarkdown(markdown: string): string {
	return cached('text', markdown, {}, () => {
		const out: string[] = [];
		collectText(renderBlockBody(markdown, {}), out);
		return out
			.join('')
			.replace(/[ \t]+\n/g, '\n')
			.replace(/\n{2,}/g, '\n')
			.trim();
	});
}

/** Empties the render cache (tests and benchmarks). */
export function clearMarkdownCache(): void {
	cache.clear();
}
