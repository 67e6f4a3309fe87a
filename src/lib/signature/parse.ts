/**
 * Capture import: a bench file (string or bytes) → samples in SI units, the detected format and
 * warnings.
 *
 * Method:
 * 1. Guard rails before any parsing: size (20 MiB), binary content (NUL bytes, control characters or
 *    undecodable bytes in the first 8 KiB), empty text. A UTF-8 byte-order mark is dropped.
 * 2. JSON when the first non-blank character is `{` or `[`. Our JSON forms (SI units):
 *      {"v":[…],"i":[…]}                      voltage and current
 *      {"t":[…],"v":[…],"i":[…]}              with a time column (s)
 *      {"t":[…],"ch1":[…],"ch2":[…],"senseOhm":R}  scope form: ch1 device volts, ch2 sense volts
 *    (`dt` may replace `t`; `voltage`/`current`/`time` are accepted as long names; a `units` object
 *    such as {"v":"mV","i":"mA","t":"ms"} scales the arrays), or an array of [v, i] / [t, v, i] rows.
 * 3. Otherwise delimited text. The delimiter is chosen on the last lines of the file (the data):
 *    the first of tab, `;`, `,`, runs of whitespace that splits them into ≥ 2 numeric fields, a
 *    decimal comma being allowed with every delimiter but `,`. Papa Parse splits the rows (fast mode
 *    when there are no quotes; whitespace runs are folded into tabs first). Rows keep their line
 *    numbers, so every error can name its line. `#`, `//` and `%` lines are comments; blank lines
 *    are skipped; comments of the form `key: value` are kept as metadata.
 * 4. The data block starts at the first row that, with the rows after it, is all numbers with the
 *    same field count. The non-numeric row just before it is the header when it has that many
 *    fields and its words are recognised; the rows before are the preamble, read as key/value pairs
 *    (`key<delimiter>value`, `key: value`, `key = value`).
 * 5. Columns are named by their header words (time / voltage / current / scope channel / sense /
 *    sample index, in any common spelling) and scaled by the unit found in the header — in
 *    parentheses, brackets, after `_`, `/` or a space, or standing alone (`V`, `mV`, `A`, `mA`,
 *    `µA`/`uA`, `nA`, `s`, `ms`, `µs`/`us`). A file with a current column is `vi-csv`; one with two
 *    voltage channels is `scope-csv`, where I = V_sense / R_sense with R_sense from the options or the
 *    preamble (keys naming a sense or shunt resistance). Without a header: two columns are V, I; three
 *    columns whose first is increasing are time (or a sample index) plus V, I — or plus two scope
 *    channels when a preamble or a sense resistance is present. Units the header does not state come
 *    from the options (V and A by default).
 * 6. Checks on the samples: count (32…2 000 000), finiteness, a tolerance of a few unreadable rows
 *    (skipped with a warning), a flat capture, a time column that does not increase (dropped with a
 *    warning). Options may swap the scope channels and invert either axis.
 */
import Papa from 'papaparse';
import { SignatureError } from './errors';
import type { CaptureFormat, ParseOptions, ParsedCapture, Samples } from './types';

export const MAX_BYTES = 20 * 1024 * 1024;
export const MAX_SAMPLES = 2_000_000;
export const MIN_SAMPLES = 32;

type Role = 'time' | 'index' | 'voltage' | 'current' | 'channel' | 'sense' | 'unknown';
type UnitKind = 'voltage' | 'current' | 'time';

interface Column {
	role: Role;
	/** SI multiplier stated by the header, or null when it states none. */
	scale: number | null;
	unitKind: UnitKind | null;
	/** Whether the header named the column (a role word or a unit). */
	recognised: boolean;
	text: string;
}

const UNITS: Record<string, { kind: UnitKind; scale: number }> = {
	v: { kind: 'voltage', scale: 1 },
	volt: { kind: 'voltage', scale: 1 },
	volts: { kind: 'voltage', scale: 1 },
	mv: { kind: 'voltage', scale: 1e-3 },
	uv: { kind: 'voltage', scale: 1e-6 },
	µv: { kind: 'voltage', scale: 1e-6 },
	kv: { kind: 'voltage', scale: 1e3 },
	a: { kind: 'current', scale: 1 },
	amp: { kind: 'current', scale: 1 },
	amps: { kind: 'current', scale: 1 },
	ma: { kind: 'current', scale: 1e-3 },
	ua: { kind: 'current', scale: 1e-6 },
	µa: { kind: 'current', scale: 1e-6 },
	na: { kind: 'current', scale: 1e-9 },
	s: { kind: 'time', scale: 1 },
	sec: { kind: 'time', scale: 1 },
	ms: { kind: 'time', scale: 1e-3 },
	us: { kind: 'time', scale: 1e-6 },
	µs: { kind: 'time', scale: 1e-6 },
	ns: { kind: 'time', scale: 1e-9 }
};

const ROLE_WORDS: Record<string, Role> = {
	t: 'time',
	time: 'time',
	seconds: 'time',
	timestamp: 'time',
	zeit: 'time',
	index: 'index',
	idx: 'index',
	n: 'index',
	no: 'index',
	nr: 'index',
	sample: 'index',
	samples: 'index',
	point: 'index',
	pt: 'index',
	// A source-phase column (what `signature simulate --csv` writes) orders the points but is no clock.
	phase: 'index',
	'#': 'index',
	v: 'voltage',
	u: 'voltage',
	voltage: 'voltage',
	volt: 'voltage',
	volts: 'voltage',
	vdut: 'voltage',
	udut: 'voltage',
	vd: 'voltage',
	vx: 'voltage',
	spannung: 'voltage',
	tension: 'voltage',
	i: 'current',
	current: 'current',
	amp: 'current',
	amps: 'current',
	ampere: 'current',
	amperes: 'current',
	idut: 'current',
	id: 'current',
	iy: 'current',
	strom: 'current',
	courant: 'current',
	ch: 'channel',
	chan: 'channel',
	channel: 'channel',
	ch1: 'channel',
	ch2: 'channel',
	chan1: 'channel',
	chan2: 'channel',
	channel1: 'channel',
	channel2: 'channel',
	input: 'channel',
	probe: 'channel',
	dut: 'channel',
	device: 'channel',
	sense: 'sense',
	shunt: 'sense',
	rsense: 'sense',
	rshunt: 'sense',
	vsense: 'sense',
	vshunt: 'sense'
};

/** Normalises the micro sign and Greek mu to one spelling. */
function foldMicro(s: string): string {
	return s.replace(/[μ\u00b5]/g, 'µ');
}

/** Reads a header cell: its role word and its unit. */
export function classifyHeader(text: string): Column {
	const raw = foldMicro(text.trim().replace(/^["']|["']$/g, ''));
	const lower = raw.toLowerCase();
	let unit: { kind: UnitKind; scale: number } | null = null;
	let rest = lower;
	// Units in brackets, or after a slash: "current (mA)", "U [V]", "I/mA".
	const bracket = /[([{]\s*([a-zµ]+)\s*[)\]}]/.exec(lower) ?? /\/\s*([a-zµ]+)\s*$/.exec(lower);
	if (bracket && UNITS[bracket[1]]) {
		unit = UNITS[bracket[1]];
		rest = lower.slice(0, bracket.index) + lower.slice(bracket.index + bracket[0].length);
	}
	const tokens = rest.split(/[^a-zµ0-9#]+/).filter((w) => w.length > 0);
	const roleOf = (w: string): Role | undefined =>
		ROLE_WORDS[w] ?? (/^(ch|chan|channel)\d+$/.test(w) ? 'channel' : undefined);
	// Words that are a role only ("current", "ch1") and words that may be a unit ("V", "mA").
	const roles = tokens.filter((w) => roleOf(w) && !UNITS[w]).map((w) => roleOf(w)!);
	for (const w of tokens) {
		const u = UNITS[w];
		if (!u) continue;
		if (!unit) unit = u;
		// "V" alone is the voltage column in volts; in "voltage_V" or "V_sense" it is only the unit.
		if (roleOf(w) && roles.length === 0) roles.push(roleOf(w)!);
	}
	let role: Role = 'unknown';
	for (const r of roles) {
		// "sense" beats a plain channel word ("CH2 sense"); a measured quantity beats "sample".
		if (role === 'unknown' || r === 'sense' || (role === 'index' && r !== 'index')) role = r;
	}
	// A "current" column measured in volts is a sense channel ("I sense (V)" on a scope).
	if (role === 'current' && unit?.kind === 'voltage') role = 'sense';
	if (role === 'unknown' && unit) role = unit.kind;
	if (role === 'unknown' && raw === '#') role = 'index';
	return {
		role,
		scale: unit ? unit.scale : null,
		unitKind: unit ? unit.kind : null,
		recognised: role !== 'unknown',
		text: text.trim()
	};
}

/**
 * Reads a quantity such as "10", "10 ohm", "4.7 kΩ", "10R", "1e-5 s", "2 MS/s" and returns it in
 * base units, or null. `m` is milli and `M` mega.
 */
export function parseQuantity(text: string): number | null {
	const m = /^\s*([+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?)\s*([a-zA-Zµμ\u00b5Ω/]*)/.exec(text);
	if (!m) return null;
	let value = Number(m[1].replace(',', '.'));
	if (!Number.isFinite(value)) return null;
	const unit = foldMicro(m[2]);
	const prefix = unit.length > 1 || /^[kKMmuµnGp]$/.test(unit) ? unit[0] : '';
	const multipliers: Record<string, number> = {
		G: 1e9,
		M: 1e6,
		k: 1e3,
		K: 1e3,
		m: 1e-3,
		u: 1e-6,
		µ: 1e-6,
		n: 1e-9,
		p: 1e-12
	};
	const bare = /^(ohms?|Ω|r|R|s|sec|V|A|Hz|S\/s|Sa\/s|hz|v|a)$/.test(unit);
	if (prefix && !bare && multipliers[prefix] !== undefined) value *= multipliers[prefix];
	return value;
}

const SENSE_KEY = /(sense|shunt|current[\s_-]*(resistor|resistance)|r[\s_-]?sense|r[\s_-]?shunt)/i;
const INTERVAL_KEY =
	/(sample[\s_-]*(interval|period|time|step)|sampling[\s_-]*(interval|period)|time[\s_-]*(step|interval|increment|per[\s_-]*sample|resolution)|x[\s_-]*incr(ement)?|^dt$|^Δt$|^delta[\s_-]*t$|horizontal[\s_-]*(interval|increment|resolution))/i;
const RATE_KEY = /(sample[\s_-]*rate|sampling[\s_-]*rate|samples[\s_-]*per[\s_-]*second|^fs$)/i;

/** Reads the sense resistance, the sample interval and their spellings out of metadata. */
function metadataNumbers(meta: Record<string, string>): {
	senseOhm?: number;
	intervalS?: number;
} {
	let senseOhm: number | undefined;
	let intervalS: number | undefined;
	for (const [key, value] of Object.entries(meta)) {
		if (senseOhm === undefined && SENSE_KEY.test(key)) {
			const q = parseQuantity(value);
			if (q !== null && q > 0) senseOhm = q;
		} else if (intervalS === undefined && INTERVAL_KEY.test(key.trim())) {
			const q = parseQuantity(value);
			if (q !== null && q > 0) intervalS = q;
		} else if (intervalS === undefined && RATE_KEY.test(key.trim())) {
			const q = parseQuantity(value);
			if (q !== null && q > 0) intervalS = 1 / q;
		}
	}
	return { senseOhm, intervalS };
}

// ---------------------------------------------------------------------------------------------
// Input guards

function decode(input: string | Uint8Array): string {
	if (typeof input === 'string') {
		if (input.length > MAX_BYTES) throw tooLarge(input.length);
		return input;
	}
	if (input.byteLength > MAX_BYTES) throw tooLarge(input.byteLength);
	// Windows "Unicode" exports are UTF-16 with a byte-order mark.
	if (input[0] === 0xff && input[1] === 0xfe) return new TextDecoder('utf-16le').decode(input);
	if (input[0] === 0xfe && input[1] === 0xff) return new TextDecoder('utf-16be').decode(input);
	const head = input.subarray(0, 8192);
	if (head.includes(0)) throw binary();
	const text = new TextDecoder('utf-8', { fatal: false }).decode(input);
	// Not UTF-8 (e.g. "µA" written as the single byte 0xB5): read it as Windows-1252 instead.
	if (text.includes('\ufffd')) {
		try {
			return new TextDecoder('windows-1252').decode(input);
		} catch {
			return text;
		}
	}
	return text;
}

function tooLarge(bytes: number): SignatureError {
	return new SignatureError(
		'too_large',
		`The file is ${(bytes / 1024 / 1024).toFixed(1)} MB; the limit is 20 MB. Export fewer samples or a shorter record.`
	);
}

function binary(): SignatureError {
	return new SignatureError(
		'binary',
		'This looks like a binary file, not a text export. Export the capture as CSV or JSON.'
	);
}

function checkBinary(text: string): void {
	const head = text.slice(0, 8192);
	let bad = 0;
	for (let k = 0; k < head.length; k++) {
		const c = head.charCodeAt(k);
		if (c === 0) throw binary();
		if ((c < 32 && c !== 9 && c !== 10 && c !== 13 && c !== 12) || c === 0xfffd) bad++;
	}
	if (bad > Math.max(4, head.length * 0.01)) throw binary();
}

// ---------------------------------------------------------------------------------------------
// Numbers

const NOT_FINITE = /^[+-]?(nan|inf|infinity|-?1\.#in[fd]|#num!|#div\/0!)$/i;

/** NaN for "not a number", ±Infinity for the spellings of non-finite values. */
function toNumber(field: string, decimalComma: boolean): number {
	const s = decimalComma ? field.replace(',', '.') : field;
	const x = +s;
	if (x === 0 && s.trim() === '') return NaN;
	if (Number.isNaN(x) && NOT_FINITE.test(s.trim())) return Infinity;
	return x;
}

function isNumberField(field: string, decimalComma: boolean): boolean {
	const x = toNumber(field, decimalComma);
	return !Number.isNaN(x);
}

// ---------------------------------------------------------------------------------------------
// Delimited text

type Delim = '\t' | ';' | ',' | 'ws';

function isCommentLine(first: string): boolean {
	const s = first.trimStart();
	return s.startsWith('#') || s.startsWith('//') || s.startsWith('%');
}

function splitLine(line: string, d: Delim): string[] {
	if (d === 'ws') return line.trim().split(/[ \t]+/);
	return line.split(d);
}

function stripTrailingEmpty(fields: string[]): string[] {
	let n = fields.length;
	while (n > 1 && fields[n - 1].trim() === '') n--;
	return n === fields.length ? fields : fields.slice(0, n);
}

/** Picks the delimiter that splits the file's last lines into ≥ 2 numeric fields. */
function detectDelimiter(text: string): Delim {
	const tail = text.length > 16384 ? text.slice(-16384) : text;
	let lines = tail.split(/\r\n|\r|\n/);
	if (tail !== text) lines = lines.slice(1);
	const sample = lines
		.filter((l) => l.trim() !== '' && !isCommentLine(l))
		.slice(-40);
	let best: Delim | null = null;
	let bestScore = 0;
	for (const d of ['\t', ';', ',', 'ws'] as Delim[]) {
		const dc = d !== ',';
		let score = 0;
		for (const line of sample) {
			const fields = stripTrailingEmpty(splitLine(line.replace(/"/g, ''), d));
			if (fields.length >= 2 && fields.every((f) => isNumberField(f, dc))) score++;
		}
		if (score > bestScore) {
			best = d;
			bestScore = score;
		}
	}
	if (!best) {
		throw new SignatureError(
			'not_numeric',
			'No rows of numbers were found. A capture needs at least two numeric columns (voltage and current, or time and two channels).'
		);
	}
	return best;
}

function parseRows(text: string, d: Delim): string[][] {
	// One line ending throughout, so rows map one-to-one onto lines even in mixed files.
	let body = text.includes('\r') ? text.replace(/\r\n?/g, '\n') : text;
	let delimiter: string = d;
	if (d === 'ws') {
		// Papa Parse splits on one delimiter; fold whitespace runs into single tabs first.
		body = body.replace(/^[ \t]+|[ \t]+$/gm, '').replace(/[ \t]+/g, '\t');
		delimiter = '\t';
	}
	const result = Papa.parse<string[]>(body, {
		delimiter,
		newline: '\n',
		header: false,
		dynamicTyping: false,
		skipEmptyLines: false,
		fastMode: !body.includes('"')
	});
	return result.data;
}

function isBlankRow(row: string[]): boolean {
	for (const f of row) if (f.trim() !== '') return false;
	return true;
}

function keyValue(row: string[], meta: Record<string, string>, joiner = ','): void {
	let line = row.join(joiner).trim();
	line = line.replace(/^(#|\/\/|%)+\s*/, '');
	if (line === '') return;
	const m = /^([^:=]+?)\s*[:=]\s*(.*)$/.exec(line);
	let key: string;
	let value: string;
	if (m) {
		key = m[1];
		value = m[2];
	} else if (joiner === ' ' && /^(.*?)\s+([+-]?\.?\d.*)$/.test(line)) {
		const w = /^(.*?)\s+([+-]?\.?\d.*)$/.exec(line)!;
		key = w[1];
		value = w[2];
	} else if (row.length >= 2) {
		key = row[0].replace(/^(#|\/\/|%)+\s*/, '');
		value = row.slice(1).join(' ');
	} else {
		return;
	}
	key = key.trim().replace(/^["']|["']$/g, '');
	value = value
		.trim()
		.replace(/^["']|["']$/g, '')
		.replace(/(,\s*)+$/, '');
	if (key !== '' && !(key in meta)) meta[key] = value;
}

interface Layout {
	format: CaptureFormat;
	time: number | null;
	/** vi-csv: voltage and current columns; scope-csv: device and sense channels. */
	a: number;
	b: number;
	scaleT: number;
	scaleA: number;
	scaleB: number;
	/** Whether the header or the options stated the unit of the voltage and of the current. */
	stated: { voltage: boolean; current: boolean };
	/** scope-csv: the second channel is already a current (a current probe), in amperes. */
	currentDirect: boolean;
	warnings: string[];
}

const HEAD_LINES = 400;

/** The first `lines` lines of the text, and the character offset at which each line starts. */
function headOf(text: string, lines: number): { text: string; offsets: number[] } {
	const offsets = [0];
	let k = 0;
	const n = text.length;
	while (k < n && offsets.length <= lines) {
		const c = text.charCodeAt(k);
		if (c === 10) offsets.push(k + 1);
		else if (c === 13) {
			if (text.charCodeAt(k + 1) === 10) k++;
			offsets.push(k + 1);
		}
		k++;
	}
	const end = offsets.length > lines ? offsets[lines] : n;
	return { text: text.slice(0, end), offsets };
}

const POW10 = Array.from({ length: 23 }, (_, k) => 10 ** k);

/**
 * Reads rows of plain numbers straight from the character codes: no per-row strings or arrays, so
 * a 100 000-row body reads in a few milliseconds. A mantissa of ≤ 15 digits scaled by an exact power
 * of ten is one correctly rounded operation, i.e. the same double `Number()` returns. Any line it
 * does not understand (comments, text, quotes, NaN, the wrong number of fields) goes to the slow
 * path with its line number, which classifies it.
 */
class BodyScanner {
	private pos = 0;
	private readonly values: Float64Array;

	constructor(
		private readonly text: string,
		private readonly delim: Delim,
		private readonly decimalComma: boolean,
		private readonly ncols: number,
		private readonly colA: number,
		private readonly colB: number,
		private readonly colT: number
	) {
		this.values = new Float64Array(ncols);
	}

	/** Parses a number at this.pos; NaN when the characters there are not a plain number. */
	private number(): number {
		const s = this.text;
		let p = this.pos;
		const start = p;
		let c = s.charCodeAt(p);
		let negative = false;
		if (c === 45 || c === 43) {
			negative = c === 45;
			c = s.charCodeAt(++p);
		}
		let mant = 0;
		let digits = 0;
		let exp = 0;
		let seen = false;
		while (c >= 48 && c <= 57) {
			if (digits < 15) {
				mant = mant * 10 + (c - 48);
				if (mant !== 0) digits++;
			} else exp++;
			seen = true;
			c = s.charCodeAt(++p);
		}
		if (c === 46 || (c === 44 && this.decimalComma)) {
			c = s.charCodeAt(++p);
			while (c >= 48 && c <= 57) {
				if (digits < 15) {
					mant = mant * 10 + (c - 48);
					if (mant !== 0) digits++;
					exp--;
				}
				seen = true;
				c = s.charCodeAt(++p);
			}
		}
		if (!seen) return NaN;
		if (c === 101 || c === 69) {
			c = s.charCodeAt(++p);
			let eneg = false;
			if (c === 45 || c === 43) {
				eneg = c === 45;
				c = s.charCodeAt(++p);
			}
			let e = 0;
			let eseen = false;
			while (c >= 48 && c <= 57) {
				e = e * 10 + (c - 48);
				eseen = true;
				c = s.charCodeAt(++p);
			}
			if (!eseen) return NaN;
			exp += eneg ? -e : e;
		}
		this.pos = p;
		let x: number;
		if (exp === 0) x = mant;
		else if (exp > 0 && exp <= 22) x = mant * POW10[exp];
		else if (exp < 0 && exp >= -22) x = mant / POW10[-exp];
		else {
			const slice = s.slice(start, p);
			x = Number(this.decimalComma ? slice.replace(',', '.') : slice);
			// Out of range (1e400): the slow path reports it with its line.
			return Number.isFinite(x) ? x : NaN;
		}
		return negative ? -x : x;
	}

	run(
		offset: number,
		firstLine: number,
		av: number[],
		bv: number[],
		tv: number[],
		slow: (lineText: string, line: number) => void
	): void {
		const s = this.text;
		const n = s.length;
		const delimCode = this.delim === 'ws' ? -1 : this.delim.charCodeAt(0);
		const ws = this.delim === 'ws';
		const { ncols, colA, colB, colT, values } = this;
		let line = firstLine;
		let p = offset;
		while (p < n) {
			const lineStart = p;
			let fields = 0;
			let ok = true;
			let c = s.charCodeAt(p);
			// Skip leading blanks.
			while (c === 32 || c === 9) c = s.charCodeAt(++p);
			if (c === 10 || c === 13 || p >= n) {
				// Blank line.
			} else {
				for (;;) {
					this.pos = p;
					const x = this.number();
					if (Number.isNaN(x) || fields >= ncols) {
						ok = false;
						break;
					}
					values[fields++] = x;
					p = this.pos;
					c = s.charCodeAt(p);
					if (ws) {
						if (c === 32 || c === 9) {
							while (c === 32 || c === 9) c = s.charCodeAt(++p);
							if (c === 10 || c === 13 || p >= n) break;
							continue;
						}
					} else {
						while (c === 32 || (c === 9 && delimCode !== 9)) c = s.charCodeAt(++p);
						if (c === delimCode) {
							c = s.charCodeAt(++p);
							while (c === 32 || (c === 9 && delimCode !== 9)) c = s.charCodeAt(++p);
							// A trailing delimiter leaves an empty last field, which is allowed.
							if (c === 10 || c === 13 || p >= n) break;
							continue;
						}
					}
					if (!(c === 10 || c === 13 || p >= n)) ok = false;
					break;
				}
				if (ok && fields === ncols) {
					av.push(values[colA]);
					bv.push(values[colB]);
					if (colT >= 0) tv.push(values[colT]);
				} else ok = false;
			}
			// To the end of the line.
			while (p < n) {
				c = s.charCodeAt(p);
				if (c === 10 || c === 13) break;
				p++;
			}
			if (!ok) slow(s.slice(lineStart, p), line);
			if (p < n) {
				if (s.charCodeAt(p) === 13 && s.charCodeAt(p + 1) === 10) p++;
				p++;
			}
			line++;
		}
	}
}

/**
 * A whitespace-delimited header splits "Voltage (mV)" into two words: join unit words back onto the
 * word before them until the header has as many fields as the data.
 */
function regroupHeader(words: string[], ncols: number): string[] {
	const out = [...words];
	const isUnit = (w: string) => {
		const bare = foldMicro(w).toLowerCase().replace(/^[([{]|[)\]}]$/g, '');
		return UNITS[bare] !== undefined && (w !== bare || !ROLE_WORDS[bare] || /^[([{]/.test(w));
	};
	for (let k = out.length - 1; k > 0 && out.length > ncols; k--) {
		if (isUnit(out[k]) && !isUnit(out[k - 1])) {
			out.splice(k - 1, 2, `${out[k - 1]} ${out[k]}`);
			k--;
		}
	}
	return out;
}

function parseDelimited(text: string, options: ParseOptions): ParsedCapture {
	const d = detectDelimiter(text);
	const decimalComma = d !== ',';
	// Papa Parse reads the head of the file (preamble, header, first rows); the numeric body is read
	// by a scanner without per-row string splitting, unless the file uses quotes.
	const quoted = text.includes('"');
	const head = quoted ? { text, offsets: null } : headOf(text, HEAD_LINES);
	const rows = parseRows(head.text, d);
	const joiner = d === 'ws' || d === '\t' ? ' ' : d;
	const warnings: string[] = [];
	const metadata: Record<string, string> = {};

	// 1. Find where the numbers start.
	const numericCount = (row: string[]): number => {
		const fields = stripTrailingEmpty(row);
		if (fields.length < 2) return -1;
		for (const f of fields) if (!isNumberField(f, decimalComma)) return -1;
		return fields.length;
	};
	let start = -1;
	let ncols = 0;
	for (let r = 0; r < rows.length && start < 0; r++) {
		const row = rows[r];
		if (isBlankRow(row) || isCommentLine(row[0])) continue;
		const n = numericCount(row);
		if (n < 2) continue;
		let ok = true;
		let seen = 0;
		for (let q = r + 1; q < rows.length && seen < 3; q++) {
			if (isBlankRow(rows[q]) || isCommentLine(rows[q][0])) continue;
			seen++;
			if (numericCount(rows[q]) !== n) {
				ok = false;
				break;
			}
		}
		if (ok) {
			start = r;
			ncols = n;
		}
	}
	if (start < 0) {
		throw new SignatureError(
			'not_numeric',
			'No block of numeric rows was found. A capture needs rows of at least two numbers.'
		);
	}

	// 2. Header and preamble.
	let headerRow = -1;
	for (let r = start - 1; r >= 0; r--) {
		if (isBlankRow(rows[r]) || isCommentLine(rows[r][0])) continue;
		headerRow = r;
		break;
	}
	let columns: Column[] | null = null;
	if (headerRow >= 0) {
		let fields = stripTrailingEmpty(rows[headerRow]);
		if (d === 'ws' && fields.length > ncols) fields = regroupHeader(fields, ncols);
		if (fields.length >= ncols) {
			const cols = fields.slice(0, ncols).map(classifyHeader);
			const known = cols.filter((c) => c.recognised).length;
			if (known >= Math.min(2, ncols) && known >= ncols - 1) columns = cols;
		}
		if (!columns) headerRow = -1;
	}
	const preambleEnd = headerRow >= 0 ? headerRow : start;
	let preambleLines = 0;
	for (let r = 0; r < preambleEnd; r++) {
		if (isBlankRow(rows[r])) continue;
		if (!isCommentLine(rows[r][0])) preambleLines++;
		keyValue(rows[r], metadata, joiner);
	}
	// Comments after the data start may also carry key: value metadata.
	const found = metadataNumbers(metadata);

	// 3. Column layout.
	const layout = chooseLayout(columns, ncols, rows, start, decimalComma, options, {
		preamble: preambleLines > 0,
		senseInFile: found.senseOhm !== undefined
	});
	warnings.push(...layout.warnings);

	// 4. Read the numbers.
	const { a, b, time } = layout;
	const av: number[] = [];
	const bv: number[] = [];
	const tv: number[] = [];
	let skipped = 0;
	let firstSkipped = -1;
	let firstSkippedText = '';
	const sep = d === 'ws' ? ' ' : d;
	/** One data row that the fast scanner did not take (or every row of a quoted file). */
	const slowRow = (input: string[], line: number): void => {
		let row = input;
		if (row.length === 1 && row[0].trim() === '') return;
		if (isCommentLine(row[0])) {
			keyValue(row, metadata, joiner);
			return;
		}
		if (row.length !== ncols) {
			row = stripTrailingEmpty(row);
			if (row.length !== ncols) {
				if (isBlankRow(row)) return;
				if (row.some((f) => !isNumberField(f, decimalComma))) {
					skipped++;
					if (firstSkipped < 0) {
						firstSkipped = line;
						firstSkippedText = row.join(sep).trim();
					}
					return;
				}
				throw new SignatureError(
					'ragged',
					`this row has ${row.length} values but the rows above have ${ncols}. Every data row needs the same columns.`,
					line
				);
			}
		}
		const x = toNumber(row[a], decimalComma);
		const y = toNumber(row[b], decimalComma);
		const z = time === null ? 0 : toNumber(row[time], decimalComma);
		if (Number.isNaN(x) || Number.isNaN(y) || Number.isNaN(z)) {
			skipped++;
			if (firstSkipped < 0) {
				firstSkipped = line;
				firstSkippedText = row.join(sep).trim();
			}
			return;
		}
		if (!Number.isFinite(x) || !Number.isFinite(y) || !Number.isFinite(z)) {
			throw new SignatureError(
				'not_finite',
				`"${row.join(sep).trim()}" holds a value that is not a finite number (NaN or infinity). Remove the row or re-export the capture.`,
				line
			);
		}
		av.push(x);
		bv.push(y);
		if (time !== null) tv.push(z);
	};
	if (head.offsets) {
		const scan = new BodyScanner(text, d, decimalComma, ncols, a, b, time ?? -1);
		scan.run(head.offsets[start], start + 1, av, bv, tv, (lineText, line) => {
			slowRow(splitLine(lineText, d), line);
		});
		if (av.length > MAX_SAMPLES) throw tooMany(av.length);
	} else {
		if (rows.length - start > MAX_SAMPLES * 1.05 + 100) throw tooMany(rows.length - start);
		for (let r = start; r < rows.length; r++) slowRow(rows[r], r + 1);
	}
	const count = av.length;
	const tolerance = Math.max(5, Math.floor(count * 0.005));
	if (skipped > tolerance) {
		throw new SignatureError(
			'not_numeric',
			`"${firstSkippedText.slice(0, 60)}" is not a row of numbers, and ${skipped} rows like it were found. Check the file is a capture export.`,
			firstSkipped
		);
	}
	if (skipped > 0) {
		warnings.push(
			`Skipped ${skipped === 1 ? 'a row that was' : `${skipped} rows that were`} not numbers (first on line ${firstSkipped}).`
		);
	}

	// 5. To SI, with the current from the sense channel for scope exports.
	let senseOhm = options.senseOhm ?? found.senseOhm;
	// Scaled in place: the read arrays become the samples.
	const v = av;
	const i = bv;
	if (layout.format === 'scope-csv' && !layout.currentDirect) {
		if (senseOhm === undefined || !(senseOhm > 0)) {
			throw new SignatureError(
				'missing_sense_resistance',
				'This is an oscilloscope export with two voltage channels, but the sense resistance is not stated. Enter the ohms of the current-sense resistor (or add a "Sense resistance" line to the file).'
			);
		}
		if (options.senseOhm !== undefined && found.senseOhm !== undefined && found.senseOhm !== options.senseOhm) {
			warnings.push(
				`The file states a sense resistance of ${found.senseOhm} Ω; using the ${options.senseOhm} Ω entered.`
			);
		}
	} else senseOhm = 1;
	const ka = layout.scaleA;
	const kb = layout.scaleB / (layout.format === 'scope-csv' && !layout.currentDirect ? senseOhm! : 1);
	if (ka !== 1) for (let k = 0; k < count; k++) v[k] *= ka;
	if (kb !== 1) for (let k = 0; k < count; k++) i[k] *= kb;
	let t: number[] | undefined;
	if (time !== null) {
		t = tv;
		if (layout.scaleT !== 1) for (let k = 0; k < count; k++) t[k] *= layout.scaleT;
	} else if (found.intervalS !== undefined) {
		t = new Array<number>(count);
		for (let k = 0; k < count; k++) t[k] = k * found.intervalS;
	}
	const parsed = finish(layout.format, { t, v, i }, metadata, warnings, options);
	parsed.unitsStated = layout.stated;
	return parsed;
}

function tooMany(n: number): SignatureError {
	return new SignatureError(
		'too_many_samples',
		`The capture has ${n} samples; the limit is ${MAX_SAMPLES.toLocaleString('en')}. Export a shorter record or fewer points.`
	);
}

function columnIncreasing(rows: string[][], start: number, col: number, dc: boolean): 'index' | 'time' | null {
	let prev = NaN;
	let integers = true;
	let steps = 0;
	for (let r = start; r < rows.length && steps < 200; r++) {
		const row = rows[r];
		if (isBlankRow(row) || isCommentLine(row[0]) || row.length <= col) continue;
		const x = toNumber(row[col], dc);
		if (!Number.isFinite(x)) continue;
		if (!Number.isNaN(prev)) {
			if (!(x > prev)) return null;
			if (x - prev !== 1) integers = false;
			steps++;
		}
		prev = x;
	}
	if (steps < 2) return null;
	return integers ? 'index' : 'time';
}

function chooseLayout(
	columns: Column[] | null,
	ncols: number,
	rows: string[][],
	start: number,
	dc: boolean,
	options: ParseOptions,
	hints: { preamble: boolean; senseInFile: boolean }
): Layout {
	const warnings: string[] = [];
	const vDefault = options.voltageUnit === 'mV' ? 1e-3 : 1;
	const iDefault = options.currentUnit === 'mA' ? 1e-3 : options.currentUnit === 'uA' ? 1e-6 : 1;
	let time: number | null = null;
	let index: number | null = null;
	let rest: number[] = [];
	const roles: Role[] = columns ? columns.map((c) => c.role) : new Array(ncols).fill('unknown');
	for (let k = 0; k < ncols; k++) {
		if (roles[k] === 'time' && time === null) time = k;
		else if (roles[k] === 'index' && index === null) index = k;
		else rest.push(k);
	}
	if (time === null && index === null && ncols >= 3) {
		// No header word for it: an increasing first column is time or a sample index.
		const kind = columnIncreasing(rows, start, 0, dc);
		if (kind === 'time' && roles[0] === 'unknown') time = 0;
		else if (kind === 'index' && roles[0] === 'unknown') index = 0;
		if (time === 0 || index === 0) rest = rest.filter((k) => k !== 0);
	}
	const hasCurrent = rest.some((k) => roles[k] === 'current');
	const hasChannel = rest.some((k) => roles[k] === 'channel' || roles[k] === 'sense');
	let format: CaptureFormat;
	if (options.format === 'vi-csv' || options.format === 'scope-csv') format = options.format;
	else if (hasCurrent) format = 'vi-csv';
	else if (hasChannel) format = 'scope-csv';
	else if (columns && rest.filter((k) => roles[k] === 'voltage').length >= 2) format = 'scope-csv';
	else if (!columns && ncols - (index === null ? 0 : 1) === 2 && hints.senseInFile) format = 'scope-csv';
	else if (!columns && time !== null && (hints.preamble || hints.senseInFile || options.senseOhm !== undefined))
		format = 'scope-csv';
	else if (options.senseOhm !== undefined && !rest.some((k) => roles[k] === 'current'))
		// A sense resistance entered for a file that names no current column: two voltage channels.
		format = 'scope-csv';
	else format = 'vi-csv';

	let a: number;
	let b: number;
	if (rest.length < 2) {
		throw new SignatureError(
			'unknown_format',
			'Could not find two data columns besides the time column. A capture needs voltage and current (or two scope channels).'
		);
	}
	if (format === 'vi-csv') {
		const vCol = rest.find((k) => roles[k] === 'voltage');
		const iCol = rest.find((k) => roles[k] === 'current');
		if (vCol !== undefined && iCol !== undefined) {
			a = vCol;
			b = iCol;
		} else if (vCol !== undefined) {
			a = vCol;
			b = rest.find((k) => k !== vCol)!;
		} else if (iCol !== undefined) {
			b = iCol;
			a = rest.find((k) => k !== iCol)!;
		} else {
			[a, b] = rest;
		}
	} else {
		const senseCol = rest.find((k) => roles[k] === 'sense');
		if (senseCol !== undefined) {
			b = senseCol;
			a = rest.find((k) => k !== senseCol)!;
		} else {
			[a, b] = rest;
		}
		if (options.swapChannels) [a, b] = [b, a];
	}
	if (rest.length > 2) {
		const extra = rest.filter((k) => k !== a && k !== b).map((k) => columns?.[k]?.text || `column ${k + 1}`);
		warnings.push(`Ignored ${extra.length === 1 ? 'a column' : 'columns'}: ${extra.join(', ')}.`);
	}
	if (!columns && ncols >= 3 && time === null && index === null) {
		warnings.push(`No header: read columns 1 and 2 as ${format === 'vi-csv' ? 'voltage and current' : 'the two channels'}.`);
	}
	if (!columns && format === 'vi-csv' && time !== null) {
		warnings.push('No header: read the columns as time (s), voltage and current.');
	}
	const scaleOf = (k: number, kind: UnitKind, fallback: number): number => {
		const col = columns?.[k];
		if (col && col.scale !== null && col.unitKind === kind) return col.scale;
		return fallback;
	};
	let scaleA: number;
	let scaleB: number;
	if (format === 'vi-csv') {
		scaleA = scaleOf(a, 'voltage', vDefault);
		scaleB = scaleOf(b, 'current', iDefault);
	} else {
		scaleA = scaleOf(a, 'voltage', vDefault);
		scaleB = scaleOf(b, 'voltage', vDefault);
	}
	// A scope channel in amperes ("CH2 (A)", a current probe) is the current itself: no sense resistor.
	const currentDirect = format === 'scope-csv' && columns?.[b]?.unitKind === 'current';
	if (currentDirect) scaleB = columns![b].scale!;
	const scaleT = time === null ? 1 : scaleOf(time, 'time', 1);
	const statedBy = (k: number, kind: UnitKind, option: unknown) =>
		option !== undefined || (columns?.[k]?.scale !== null && columns?.[k]?.unitKind === kind);
	const stated = {
		voltage: statedBy(a, 'voltage', options.voltageUnit),
		current:
			format === 'vi-csv'
				? statedBy(b, 'current', options.currentUnit)
				: currentDirect || statedBy(b, 'voltage', options.voltageUnit)
	};
	return { format, time, a, b, scaleT, scaleA, scaleB, stated, currentDirect, warnings };
}

// ---------------------------------------------------------------------------------------------
// JSON

function jsonLine(text: string, message: string): number | undefined {
	const m = /position (\d+)/.exec(message);
	if (!m) {
		const lc = /line (\d+)/.exec(message);
		return lc ? Number(lc[1]) : undefined;
	}
	const pos = Number(m[1]);
	let line = 1;
	for (let k = 0; k < pos && k < text.length; k++) if (text.charCodeAt(k) === 10) line++;
	return line;
}

function findKey(obj: Record<string, unknown>, names: string[]): string | undefined {
	const keys = Object.keys(obj);
	for (const name of names) {
		const hit = keys.find((k) => k.toLowerCase().replace(/[\s_-]/g, '') === name);
		if (hit !== undefined) return hit;
	}
	return undefined;
}

function jsonArray(value: unknown, name: string): number[] {
	if (!Array.isArray(value)) {
		throw new SignatureError('bad_json', `"${name}" must be an array of numbers.`);
	}
	let k0 = 0;
	while (k0 < value.length && typeof value[k0] === 'number') k0++;
	// The usual case: already an array of numbers (JSON has no NaN or infinity).
	if (k0 === value.length) return value as number[];
	const out = value.slice(0, k0) as number[];
	for (let k = k0; k < value.length; k++) {
		const x = value[k];
		if (typeof x === 'number') {
			out[k] = x;
			continue;
		}
		if (x === null || (typeof x === 'string' && NOT_FINITE.test(x.trim()))) {
			throw new SignatureError(
				'not_finite',
				`${name}[${k}] is ${JSON.stringify(x)}, not a finite number. Remove the sample or re-export the capture.`
			);
		}
		if (typeof x === 'string' && x.trim() !== '' && Number.isFinite(+x)) {
			out[k] = +x;
			continue;
		}
		throw new SignatureError('not_numeric', `${name}[${k}] is ${JSON.stringify(x)}, not a number.`);
	}
	return out;
}

function unitScale(unit: unknown, kind: UnitKind): number | null {
	if (typeof unit !== 'string') return null;
	const u = UNITS[foldMicro(unit.trim()).toLowerCase()];
	return u && u.kind === kind ? u.scale : null;
}

function parseJson(text: string, options: ParseOptions): ParsedCapture {
	let root: unknown;
	try {
		root = JSON.parse(text);
	} catch (e) {
		const message = e instanceof Error ? e.message : String(e);
		throw new SignatureError(
			'bad_json',
			'The JSON is malformed (a missing comma, bracket or quote?). Check the file.',
			jsonLine(text, message)
		);
	}
	const warnings: string[] = [];
	const metadata: Record<string, string> = {};
	let t: number[] | undefined;
	let v: number[];
	let i: number[];
	if (Array.isArray(root)) {
		// Rows: [[v, i], …] or [[t, v, i], …], or [{v, i}, …].
		const first = root[0];
		if (first && typeof first === 'object' && !Array.isArray(first)) {
			const o = first as Record<string, unknown>;
			const vk = findKey(o, ['v', 'voltage', 'u']);
			const ik = findKey(o, ['i', 'current']);
			const tk = findKey(o, ['t', 'time']);
			if (!vk || !ik) throw new SignatureError('bad_json', 'Each sample object needs "v" and "i".');
			v = jsonArray(root.map((r) => (r as Record<string, unknown>)?.[vk]), 'v');
			i = jsonArray(root.map((r) => (r as Record<string, unknown>)?.[ik]), 'i');
			if (tk) t = jsonArray(root.map((r) => (r as Record<string, unknown>)?.[tk]), 't');
		} else {
			const width = Array.isArray(first) ? first.length : 0;
			if (width !== 2 && width !== 3) {
				throw new SignatureError('bad_json', 'A JSON array capture must hold rows of [v, i] or [t, v, i].');
			}
			for (let k = 0; k < root.length; k++) {
				const row = root[k];
				if (!Array.isArray(row) || row.length !== width) {
					throw new SignatureError('ragged', `Row ${k} of the JSON array does not have ${width} values like the first row.`);
				}
			}
			const col = (c: number, name: string) => jsonArray(root.map((r: unknown[]) => r[c]), name);
			if (width === 3) {
				t = col(0, 't');
				v = col(1, 'v');
				i = col(2, 'i');
			} else {
				v = col(0, 'v');
				i = col(1, 'i');
			}
		}
		return finish('json', { t, v, i }, metadata, warnings, options);
	}
	if (!root || typeof root !== 'object') {
		throw new SignatureError('bad_json', 'The JSON must be an object with "v" and "i" arrays.');
	}
	let obj = root as Record<string, unknown>;
	// {"samples": {…}} or {"data": {…}}: the arrays one level down, the rest (e.g. senseOhm) kept.
	const nest = findKey(obj, ['samples', 'data', 'capture']);
	if (nest !== undefined && obj[nest] && typeof obj[nest] === 'object' && !Array.isArray(obj[nest])) {
		obj = { ...obj, ...(obj[nest] as Record<string, unknown>) };
	} else if (nest !== undefined && Array.isArray(obj[nest]) && findKey(obj, ['v', 'voltage']) === undefined) {
		return parseJson(JSON.stringify(obj[nest]), options);
	}
	const units = (obj.units && typeof obj.units === 'object' ? obj.units : {}) as Record<string, unknown>;
	const vk = findKey(obj, ['v', 'voltage', 'u']);
	const ik = findKey(obj, ['i', 'current']);
	const c1 = findKey(obj, ['ch1', 'channel1', 'chan1']);
	const c2 = findKey(obj, ['ch2', 'channel2', 'chan2']);
	const tk = findKey(obj, ['t', 'time']);
	const dtk = findKey(obj, ['dt', 'sampleintervals', 'sampleinterval', 'interval']);
	const sk = findKey(obj, ['senseohm', 'senseresistanceohm', 'sense', 'shuntohm', 'rsense', 'senseresistance']);
	const vScale =
		unitScale(units.v ?? units.voltage, 'voltage') ?? (options.voltageUnit === 'mV' ? 1e-3 : 1);
	const iScale =
		unitScale(units.i ?? units.current, 'current') ??
		(options.currentUnit === 'mA' ? 1e-3 : options.currentUnit === 'uA' ? 1e-6 : 1);
	const tScale = unitScale(units.t ?? units.time, 'time') ?? 1;
	const scope = options.format === 'scope-csv' || (!ik && c1 !== undefined && c2 !== undefined);
	if (scope) {
		if (!c1 || !c2) throw new SignatureError('bad_json', 'A scope JSON capture needs "ch1" and "ch2" arrays.');
		let dut = jsonArray(obj[c1], c1);
		let sense = jsonArray(obj[c2], c2);
		if (options.swapChannels) [dut, sense] = [sense, dut];
		const r = options.senseOhm ?? (sk !== undefined ? Number(obj[sk]) : undefined);
		if (r === undefined || !Number.isFinite(r) || r <= 0) {
			throw new SignatureError(
				'missing_sense_resistance',
				'This scope capture has two voltage channels but no sense resistance. Add "senseOhm" (ohms of the current-sense resistor) or enter it.'
			);
		}
		const chScale = unitScale(units.ch1 ?? units.ch ?? units.v, 'voltage') ?? vScale;
		v = dut.map((x) => x * chScale);
		i = sense.map((x) => (x * chScale) / r);
		metadata.senseOhm = String(r);
	} else {
		if (!vk || !ik) {
			throw new SignatureError('bad_json', 'The JSON capture needs "v" (volts) and "i" (amperes) arrays.');
		}
		v = jsonArray(obj[vk], vk);
		i = jsonArray(obj[ik], ik);
		if (vScale !== 1) v = v.map((x) => x * vScale);
		if (iScale !== 1) i = i.map((x) => x * iScale);
	}
	if (tk !== undefined) {
		t = jsonArray(obj[tk], tk);
		if (tScale !== 1) t = t.map((x) => x * tScale);
	} else if (dtk !== undefined) {
		const dt = Number(obj[dtk]) * tScale;
		if (Number.isFinite(dt) && dt > 0) t = v.map((_, k) => k * dt);
	}
	return finish('json', { t, v, i }, metadata, warnings, options);
}

// ---------------------------------------------------------------------------------------------
// Common checks

function finish(
	format: CaptureFormat,
	samples: Samples,
	metadata: Record<string, string>,
	warnings: string[],
	options: ParseOptions
): ParsedCapture {
	const { v, i } = samples;
	let { t } = samples;
	if (v.length !== i.length || (t && t.length !== v.length)) {
		throw new SignatureError(
			'ragged',
			`The voltage, current${t ? ' and time' : ''} arrays differ in length (${v.length}, ${i.length}${t ? `, ${t.length}` : ''}). Each sample needs every value.`
		);
	}
	const count = v.length;
	if (count === 0) {
		throw new SignatureError('empty', 'The file holds no samples.');
	}
	if (count < MIN_SAMPLES) {
		throw new SignatureError(
			'too_few_samples',
			`The capture has only ${count} samples; at least ${MIN_SAMPLES} are needed to find the curve. Capture a longer record or more points per period.`
		);
	}
	if (count > MAX_SAMPLES) throw tooMany(count);
	let vMin = Infinity;
	let vMax = -Infinity;
	let iMin = Infinity;
	let iMax = -Infinity;
	for (let k = 0; k < count; k++) {
		const x = v[k];
		const y = i[k];
		if (!Number.isFinite(x) || !Number.isFinite(y)) {
			throw new SignatureError('not_finite', `Sample ${k + 1} is not a finite number (NaN or infinity).`);
		}
		if (x < vMin) vMin = x;
		if (x > vMax) vMax = x;
		if (y < iMin) iMin = y;
		if (y > iMax) iMax = y;
	}
	const flatV = vMax - vMin <= 1e-12 * Math.max(Math.abs(vMax), Math.abs(vMin), 1e-300);
	const flatI = iMax - iMin <= 1e-12 * Math.max(Math.abs(iMax), Math.abs(iMin), 1e-300);
	if (flatV && flatI) {
		throw new SignatureError(
			'flat',
			'Both voltage and current are constant: the capture holds no signal. Check the probes are connected and the tester is running.'
		);
	}
	if (t) {
		let increasing = true;
		for (let k = 1; k < count; k++) {
			if (!(t[k] > t[k - 1])) {
				increasing = false;
				break;
			}
		}
		if (!increasing) {
			warnings.push('The time column does not increase steadily; it was ignored and the samples taken as evenly spaced.');
			t = undefined;
		}
	}
	if (options.invertVoltage) for (let k = 0; k < count; k++) v[k] = -v[k];
	if (options.invertCurrent) for (let k = 0; k < count; k++) i[k] = -i[k];
	return { format, samples: t ? { t, v, i } : { v, i }, count, metadata, warnings };
}

/**
 * Reads a capture file (vi-csv, scope-csv or our JSON; detected unless `options.format` says) into
 * SI samples. Throws `SignatureError` with a technician-readable message, naming the line where it can.
 */
export function parseCapture(input: string | Uint8Array, options: ParseOptions = {}): ParsedCapture {
	let text = decode(input);
	checkBinary(text);
	if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
	if (text.trim() === '') {
		throw new SignatureError('empty', 'The file is empty. Export the capture again and upload the file it writes.');
	}
	const first = /\S/.exec(text);
	const looksJson = first !== null && (first[0] === '{' || first[0] === '[');
	if (options.format === 'json' || (options.format === undefined && looksJson)) {
		return parseJson(text, options);
	}
	if (looksJson && options.format !== undefined) {
		// A JSON file forced to a CSV format still reads as JSON, reported as asked.
		const parsed = parseJson(text, options);
		return { ...parsed, format: options.format };
	}
	return parseDelimited(text, options);
}
