/**
 * A deliberately small MIME reader for the local mail stand-in: headers (folded lines, RFC 2047
 * encoded words), nested multipart bodies, and the quoted-printable / base64 / 7bit / 8bit
 * transfer encodings nodemailer writes. It extracts the text and HTML parts and the links; it is
 * not a general mail parser and does not need to be.
 */

export interface ParsedMail {
	headers: Map<string, string>;
	subject: string;
	from: string;
	to: string[];
	text: string | null;
	html: string | null;
	links: string[];
}

interface Part {
	headers: Map<string, string>;
	body: string;
}

function splitHeadBody(raw: string): { head: string; body: string } {
	const m = /\r?\n\r?\n/.exec(raw);
	if (!m) return { head: raw, body: '' };
	return { head: raw.slice(0, m.index), body: raw.slice(m.index + m[0].length) };
}

function parseHeaders(head: string): Map<string, string> {
	const headers = new Map<string, string>();
	// Unfold: a line starting with white space continues the previous header.
	const unfolded = head.replace(/\r?\n[ \t]+/g, ' ');
	for (const line of unfolded.split(/\r?\n/)) {
		const colon = line.indexOf(':');
		if (colon <= 0) continue;
		const name = line.slice(0, colon).trim().toLowerCase();
		if (!headers.has(name)) headers.set(name, line.slice(colon + 1).trim());
	}
	return headers;
}

/** The value of one parameter of a structured header, e.g. boundary of Content-Type. */
export function headerParam(value: string, param: string): string | undefined {
	const re = new RegExp(`;\\s*${param}\\s*=\\s*(?:"([^"]*)"|([^;\\s]+))`, 'i');
	const m = re.exec(value);
	return m ? (m[1] ?? m[2]) : undefined;
}

function bytesToText(bytes: Uint8Array, charset = 'utf-8'): string {
	try {
		return new TextDecoder(charset).decode(bytes);
	} catch {
		return new TextDecoder('utf-8').decode(bytes);
	}
}

export function decodeQuotedPrintable(input: string, charset?: string): string {
	const soft = input.replace(/=\r?\n/g, '');
	const bytes: number[] = [];
	for (let i = 0; i < soft.length; i++) {
		const c = soft[i];
		if (c === '=' && /^[0-9A-Fa-f]{2}$/.test(soft.slice(i + 1, i + 3))) {
			bytes.push(parseInt(soft.slice(i + 1, i + 3), 16));
			i += 2;
		} else {
			for (const b of new TextEncoder().encode(c)) bytes.push(b);
		}
	}
	return bytesToText(Uint8Array.from(bytes), charset);
}

/** Decodes RFC 2047 encoded words (=?charset?Q|B?…?=) in a header value. */
export function decodeEncodedWords(value: string): string {
	return value
		.replace(/\?=\s+=\?/g, '?==?') // white space between adjacent encoded words is dropped
		.replace(/=\?([^?]+)\?([QqBb])\?([^?]*)\?=/g, (_, charset: string, enc: string, data: string) => {
			if (enc.toUpperCase() === 'B') return bytesToText(Buffer.from(data, 'base64'), charset);
			return decodeQuotedPrintable(data.replace(/_/g, ' '), charset);
		});
}

/** The part's content, with SMTP's CRLF line ends turned into \n. */
function decodeBody(part: Part): string {
	return decodeTransfer(part).replace(/\r\n/g, '\n');
}

function decodeTransfer(part: Part): string {
	const encoding = (part.headers.get('content-transfer-encoding') ?? '7bit').toLowerCase();
	const charset = headerParam(part.headers.get('content-type') ?? '', 'charset');
	if (encoding === 'base64') return bytesToText(Buffer.from(part.body.replace(/\s+/g, ''), 'base64'), charset);
	if (encoding === 'quoted-printable') return decodeQuotedPrintable(part.body, charset);
	return part.body;
}

function leafParts(part: Part, depth = 0): Part[] {
	const type = part.headers.get('content-type') ?? 'text/plain';
	const boundary = headerParam(type, 'boundary');
	if (!/^multipart\//i.test(type) || !boundary || depth > 8) return [part];
	const delimiter = `--${boundary}`;
	const pieces = part.body.split(new RegExp(`\\r?\\n?${delimiter.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}(?:--)?[ \\t]*\\r?\\n?`));
	// pieces[0] is the preamble and the last one the epilogue.
	return pieces
		.slice(1, -1)
		.filter((p) => p.trim() !== '')
		.flatMap((p) => {
			const { head, body } = splitHeadBody(p);
			return leafParts({ headers: parseHeaders(head), body }, depth + 1);
		});
}

function addressesOf(value: string | undefined): string[] {
	if (!value) return [];
	return [...decodeEncodedWords(value).matchAll(/<([^>]+)>|([^\s,<>"]+@[^\s,<>"]+)/g)].map((m) => (m[1] ?? m[2]).trim());
}

/** http(s) links in text or HTML, in order of appearance, without duplicates. */
export function extractLinks(content: string): string[] {
	const found = [...content.matchAll(/https?:\/\/[^\s"'<>]+/g)].map((m) => m[0].replace(/&amp;/g, '&').replace(/[).,;]+$/, ''));
	return [...new Set(found)];
}

export function parseMail(raw: string): ParsedMail {
	const { head, body } = splitHeadBody(raw);
	const headers = parseHeaders(head);
	const leaves = leafParts({ headers, body });
	const pick = (type: string) => {
		const p = leaves.find((l) => (l.headers.get('content-type') ?? 'text/plain').toLowerCase().startsWith(type));
		return p ? decodeBody(p) : null;
	};
	const text = pick('text/plain');
	const html = pick('text/html');
	return {
		headers,
		subject: decodeEncodedWords(headers.get('subject') ?? ''),
		from: decodeEncodedWords(headers.get('from') ?? ''),
		to: addressesOf(headers.get('to')),
		text,
		html,
		links: extractLinks(text ?? html ?? '')
	};
}
