/**
 * `npm run --silent signature -- <command>`: the signature engine for bench PCs and scripts.
 * JSON on stdout; on any error one line on stderr and exit status 2. See `usage` below.
 *
 * A capture may be given wherever a curve is expected; so may a canonical-curve JSON file (what
 * `simulate` prints), which carries its own conditions.
 */
import { readFileSync, statSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { analyse } from '../src/lib/signature/analyse';
import { canonicalise, inferUnits } from '../src/lib/signature/canonical';
import { compare } from '../src/lib/signature/compare';
import { testConditions } from '../src/lib/signature/conditions';
import { toCanonical } from '../src/lib/signature/curve';
import { SignatureError } from '../src/lib/signature/errors';
import { MAX_BYTES, parseCapture, parseQuantity } from '../src/lib/signature/parse';
import { parseModel, simulate } from '../src/lib/signature/simulate';
import type { CanonicalCurve, CaptureFormat, ParseOptions, TestConditions } from '../src/lib/signature/types';

const usage = `Usage: npm run --silent signature -- <command> [options]

Commands
  analyze FILE --vs V --rs OHM --f HZ [capture options]
      Class, parameters, residual and canonical curve of a capture.
  simulate --model MODEL.json --vs V --rs OHM --f HZ [--points N] [--csv]
      The canonical curve of a device model (JSON, or CSV with --csv).
  compare A B --vs V --rs OHM --f HZ [--b-vs V --b-rs OHM --b-f HZ --b-sense-ohm OHM]
      Shape distance, similarity (0-100) and whether the conditions are comparable.
      B takes A's conditions unless --b-… options are given.
  rank QUERY --vs V --rs OHM --f HZ --library LIB.jsonl [--limit N]
      Library curves, best first. Each line of LIB.jsonl is
      {"id": "...", "path": "...", "vs": V, "rs": OHM, "f": HZ, "senseOhm": OHM?};
      paths are relative to the library file.

Capture options
  --sense-ohm OHM          sense resistor of a scope export (I = V_sense / R_sense)
  --format F               vi-csv | scope-csv | json (default: detected)
  --voltage-unit U         V | mV, when the file does not say
  --current-unit U         A | mA | uA, when the file does not say
  --swap-channels          scope export: the first channel is the sense voltage
  --invert-voltage, --invert-current

Other options
  --points N               points of the canonical curve (default 256)
  --pretty                 indent the JSON
  -h, --help               this text

Values take SI prefixes: --rs 4.7k, --f 1kHz, --vs 500m.
Output is JSON on stdout; errors are one line on stderr with exit status 2.
`;

class UsageError extends Error {}

const options = {
	vs: { type: 'string' },
	rs: { type: 'string' },
	f: { type: 'string' },
	'sense-ohm': { type: 'string' },
	'b-vs': { type: 'string' },
	'b-rs': { type: 'string' },
	'b-f': { type: 'string' },
	'b-sense-ohm': { type: 'string' },
	format: { type: 'string' },
	'voltage-unit': { type: 'string' },
	'current-unit': { type: 'string' },
	'swap-channels': { type: 'boolean' },
	'invert-voltage': { type: 'boolean' },
	'invert-current': { type: 'boolean' },
	model: { type: 'string' },
	library: { type: 'string' },
	limit: { type: 'string' },
	points: { type: 'string' },
	csv: { type: 'boolean' },
	pretty: { type: 'boolean' },
	help: { type: 'boolean', short: 'h' }
} as const;

type Values = ReturnType<typeof parseArgs<{ options: typeof options; allowPositionals: true }>>['values'];

function quantity(name: string, text: string | undefined): number | undefined {
	if (text === undefined) return undefined;
	const value = parseQuantity(text);
	if (value === null || !/^\s*[+-]?[\d.]/.test(text)) throw new UsageError(`--${name}: "${text}" is not a number.`);
	return value;
}

function conditionsFrom(values: Values, prefix = '', fallback?: TestConditions): TestConditions {
	const vs = quantity(`${prefix}vs`, values[`${prefix}vs` as 'vs']) ?? fallback?.sourcePeakV;
	const rs = quantity(`${prefix}rs`, values[`${prefix}rs` as 'rs']) ?? fallback?.sourceResistanceOhm;
	const f = quantity(`${prefix}f`, values[`${prefix}f` as 'f']) ?? fallback?.frequencyHz;
	const missing = [
		vs === undefined ? `--${prefix}vs` : '',
		rs === undefined ? `--${prefix}rs` : '',
		f === undefined ? `--${prefix}f` : ''
	].filter(Boolean);
	if (missing.length) throw new UsageError(`Give the test conditions: ${missing.join(', ')} (see --help).`);
	return validConditions({ sourcePeakV: vs!, sourceResistanceOhm: rs!, frequencyHz: f! });
}

function validConditions(c: TestConditions): TestConditions {
	const checked = testConditions.safeParse(c);
	if (!checked.success) throw new SignatureError('bad_conditions', checked.error.issues.map((i) => i.message).join(' '));
	return checked.data;
}

function captureOptions(values: Values, senseOhm: string | undefined, senseName: string): ParseOptions {
	const o: ParseOptions = {};
	const sense = quantity(senseName, senseOhm);
	if (sense !== undefined) o.senseOhm = sense;
	if (values.format !== undefined) {
		if (!['vi-csv', 'scope-csv', 'json'].includes(values.format)) {
			throw new UsageError(`--format must be vi-csv, scope-csv or json, not "${values.format}".`);
		}
		o.format = values.format as CaptureFormat;
	}
	const vu = values['voltage-unit'];
	if (vu !== undefined) {
		if (vu !== 'V' && vu !== 'mV') throw new UsageError(`--voltage-unit must be V or mV, not "${vu}".`);
		o.voltageUnit = vu;
	}
	const cu = values['current-unit']?.replace(/^[µμ]A$/, 'uA');
	if (cu !== undefined) {
		if (cu !== 'A' && cu !== 'mA' && cu !== 'uA') throw new UsageError(`--current-unit must be A, mA or uA, not "${cu}".`);
		o.currentUnit = cu;
	}
	if (values['swap-channels']) o.swapChannels = true;
	if (values['invert-voltage']) o.invertVoltage = true;
	if (values['invert-current']) o.invertCurrent = true;
	return o;
}

function points(values: Values): number | undefined {
	if (values.points === undefined) return undefined;
	const n = Number(values.points);
	if (!Number.isInteger(n) || n < 8 || n > 65536) throw new UsageError('--points must be a whole number from 8 to 65536.');
	return n;
}

function readBytes(path: string): Uint8Array {
	let size: number;
	try {
		size = statSync(path).size;
	} catch {
		throw new UsageError(`Cannot read ${path}: no such file.`);
	}
	if (size > MAX_BYTES) {
		throw new SignatureError('too_large', `${path} is ${(size / 1024 / 1024).toFixed(1)} MB; the limit is 20 MB.`);
	}
	try {
		return readFileSync(path);
	} catch (e) {
		throw new UsageError(`Cannot read ${path}: ${(e as NodeJS.ErrnoException).code ?? 'error'}.`);
	}
}

/** A canonical curve saved as JSON (what `simulate` prints), or null when the bytes are not one. */
function savedCurve(bytes: Uint8Array): CanonicalCurve | null {
	let first = 0;
	while (first < bytes.length && (bytes[first] <= 32 || bytes[first] === 0xef || bytes[first] === 0xbb || bytes[first] === 0xbf)) first++;
	if (bytes[first] !== 0x7b) return null;
	let json: unknown;
	try {
		json = JSON.parse(new TextDecoder().decode(bytes));
	} catch {
		return null;
	}
	const o = json as Partial<CanonicalCurve>;
	if (!o || !Array.isArray(o.v) || !Array.isArray(o.i) || !Array.isArray(o.vn) || !o.conditions) return null;
	const c = validConditions(o.conditions);
	if (o.v.length !== o.i.length || o.v.length < 8 || !o.v.every(Number.isFinite) || !o.i.every(Number.isFinite)) {
		throw new SignatureError('bad_json', 'The saved curve needs equal-length, finite "v" and "i" arrays.');
	}
	return toCanonical(o.v, o.i, c, {
		periods: typeof o.periods === 'number' ? o.periods : 0,
		periodSpread: typeof o.periodSpread === 'number' ? o.periodSpread : null,
		simulated: o.simulated === true
	});
}

/** A curve from a capture file (or a saved curve) under the given conditions. */
function loadCurve(path: string, conditions: TestConditions, parseOptions: ParseOptions, n?: number): CanonicalCurve {
	const bytes = readBytes(path);
	const saved = savedCurve(bytes);
	if (saved) return saved;
	const capture = inferUnits(parseCapture(bytes, parseOptions), conditions);
	const curve = canonicalise(capture.samples, conditions, { points: n });
	curve.warnings = [...capture.warnings, ...(curve.warnings ?? [])];
	return curve;
}

function print(value: unknown, pretty: boolean | undefined): void {
	process.stdout.write(JSON.stringify(value, null, pretty ? 2 : undefined) + '\n');
}

function onePositional(positionals: string[], what: string, count: number): string[] {
	const args = positionals.slice(1);
	if (args.length !== count) {
		throw new UsageError(`${positionals[0]} needs ${what} (see --help).`);
	}
	return args;
}

function analyzeCommand(positionals: string[], values: Values): void {
	const [file] = onePositional(positionals, 'one capture FILE', 1);
	const conditions = conditionsFrom(values);
	const bytes = readBytes(file);
	const capture = inferUnits(parseCapture(bytes, captureOptions(values, values['sense-ohm'], 'sense-ohm')), conditions);
	const curve = canonicalise(capture.samples, conditions, { points: points(values) });
	const analysis = analyse(curve);
	const warnings = [...new Set([...capture.warnings, ...(curve.warnings ?? []), ...analysis.warnings])];
	const { warnings: _w, ...canonical } = curve;
	print(
		{
			format: capture.format,
			samples: capture.count,
			periods: curve.periods,
			periodSpread: curve.periodSpread,
			class: analysis.class,
			confidence: analysis.confidence,
			summary: analysis.summary,
			parameters: analysis.parameters,
			residual: analysis.residual,
			warnings,
			canonical
		},
		values.pretty
	);
}

function simulateCommand(positionals: string[], values: Values): void {
	onePositional(positionals, 'no FILE argument: give the model with --model MODEL.json', 0);
	if (!values.model) throw new UsageError('simulate needs --model MODEL.json (see --help).');
	const conditions = conditionsFrom(values);
	const text = new TextDecoder().decode(readBytes(values.model));
	const model = parseModel(text);
	const curve = simulate(model, conditions, { points: points(values) });
	if (values.csv) {
		const lines = ['phase_deg,voltage_V,current_A'];
		const n = curve.v.length;
		for (let k = 0; k < n; k++) {
			lines.push(`${Number(((360 * k) / n).toPrecision(10))},${curve.v[k].toPrecision(9)},${curve.i[k].toPrecision(9)}`);
		}
		process.stdout.write(lines.join('\n') + '\n');
		return;
	}
	print(curve, values.pretty);
}

function compareCommand(positionals: string[], values: Values): void {
	const [fa, fb] = onePositional(positionals, 'two files, A and B', 2);
	const n = points(values);
	const ca = conditionsFrom(values);
	const cb = conditionsFrom(values, 'b-', ca);
	const a = loadCurve(fa, ca, captureOptions(values, values['sense-ohm'], 'sense-ohm'), n);
	const b = loadCurve(fb, cb, captureOptions(values, values['b-sense-ohm'] ?? values['sense-ohm'], 'b-sense-ohm'), n);
	const result = compare(a, b);
	const warnings = [...(a.warnings ?? []).map((w) => `A: ${w}`), ...(b.warnings ?? []).map((w) => `B: ${w}`)];
	print({ ...result, warnings }, values.pretty);
}

interface LibraryEntry {
	id: string;
	path: string;
	vs: number;
	rs: number;
	f: number;
	senseOhm?: number;
}

function readLibrary(path: string): LibraryEntry[] {
	const text = new TextDecoder().decode(readBytes(path));
	const entries: LibraryEntry[] = [];
	const lines = text.split(/\r\n|\r|\n/);
	for (let k = 0; k < lines.length; k++) {
		const line = lines[k].trim();
		if (line === '' || line.startsWith('#')) continue;
		let o: Record<string, unknown>;
		try {
			o = JSON.parse(line);
		} catch {
			throw new SignatureError('bad_json', `${path} line ${k + 1} is not valid JSON.`);
		}
		const id = o.id;
		const p = o.path;
		const num = (x: unknown) => (typeof x === 'number' ? x : typeof x === 'string' ? (parseQuantity(x) ?? NaN) : NaN);
		const entry = { id: String(id ?? ''), path: String(p ?? ''), vs: num(o.vs), rs: num(o.rs), f: num(o.f) } as LibraryEntry;
		if ((typeof id !== 'string' && typeof id !== 'number') || typeof p !== 'string' || ![entry.vs, entry.rs, entry.f].every(Number.isFinite)) {
			throw new SignatureError('bad_json', `${path} line ${k + 1} needs "id", "path", "vs", "rs" and "f".`);
		}
		if (o.senseOhm !== undefined) entry.senseOhm = num(o.senseOhm);
		entry.path = resolve(dirname(path), entry.path);
		entries.push(entry);
	}
	if (entries.length === 0) throw new UsageError(`${path} holds no library entries.`);
	return entries;
}

function rankCommand(positionals: string[], values: Values): void {
	const [query] = onePositional(positionals, 'one QUERY file', 1);
	if (!values.library) throw new UsageError('rank needs --library LIB.jsonl (see --help).');
	const n = points(values);
	const limit = values.limit === undefined ? Infinity : Number(values.limit);
	if (!(limit >= 1)) throw new UsageError('--limit must be a positive number.');
	const q = loadCurve(query, conditionsFrom(values), captureOptions(values, values['sense-ohm'], 'sense-ohm'), n);
	const library = readLibrary(values.library);
	const base = captureOptions(values, undefined, 'sense-ohm');
	const ranked = library.map((entry) => {
		let curve: CanonicalCurve;
		try {
			const c = validConditions({ sourcePeakV: entry.vs, sourceResistanceOhm: entry.rs, frequencyHz: entry.f });
			curve = loadCurve(entry.path, c, { ...base, senseOhm: entry.senseOhm }, n);
		} catch (e) {
			const message = e instanceof Error ? e.message : String(e);
			throw new SignatureError(e instanceof SignatureError ? e.code : 'unknown_format', `library entry "${entry.id}": ${message}`);
		}
		const r = compare(q, curve);
		return { id: entry.id, similarity: r.similarity, distance: r.distance, comparable: r.comparable };
	});
	// Comparable conditions first, then by distance.
	ranked.sort((x, y) => Number(y.comparable) - Number(x.comparable) || x.distance - y.distance);
	print(ranked.slice(0, limit), values.pretty);
}

function main(argv: string[]): void {
	let parsed;
	try {
		parsed = parseArgs({ args: argv, options, allowPositionals: true, strict: true });
	} catch (e) {
		throw new UsageError(`${(e as Error).message.split('\n')[0]} (see --help)`);
	}
	const { values, positionals } = parsed;
	const command = positionals[0];
	if (values.help || command === 'help' || command === undefined) {
		if (command === undefined && !values.help) {
			process.stderr.write(usage);
			process.exitCode = 2;
			return;
		}
		process.stdout.write(usage);
		return;
	}
	switch (command) {
		case 'analyze':
		case 'analyse':
			return analyzeCommand(positionals, values);
		case 'simulate':
			return simulateCommand(positionals, values);
		case 'compare':
			return compareCommand(positionals, values);
		case 'rank':
			return rankCommand(positionals, values);
		default:
			throw new UsageError(`Unknown command "${command}": use analyze, simulate, compare or rank (see --help).`);
	}
}

try {
	main(process.argv.slice(2));
} catch (e) {
	const message = e instanceof Error ? e.message : String(e);
	const kind = e instanceof SignatureError ? `${e.code}: ` : '';
	process.stderr.write(`signature: ${kind}${message.replace(/\s*\n\s*/g, ' ')}\n`);
	process.exitCode = 2;
}
