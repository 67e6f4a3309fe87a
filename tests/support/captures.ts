/**
 * Bench-like capture files synthesised from a canonical curve, for accuracy, round-trip and ranking
 * tests.
 *
 * A canonical curve is one period sampled uniformly in source phase θ (point k at θ = 2πk/N, the
 * source e = V + I·Rs = Vs·sin θ). A bench capture is that period seen through an instrument: it
 * starts at any phase, holds a non-whole number of periods, has an odd sample count, white noise on
 * both channels and the quantisation of an ADC. We sample the curve at θ(t) = ωt + φ0 by periodic
 * linear interpolation (ask `simulate` for e.g. 4096 points so interpolation error is negligible),
 * add Gaussian noise (Box–Muller) and round to an ADC step, then write it in one of the three file
 * formats the parser accepts, in one of many header / unit / delimiter styles.
 *
 * Everything is driven by a seeded generator (`seededRandom`, the mulberry32 generator), so tests are
 * deterministic.
 *
 * Typical use:
 *   const rng = seededRandom(42);
 *   const cap = synthesiseCapture(simulate(model, c, { points: 4096 }), { rng });
 *   const parsed = parseCapture(cap.text, cap.parseOptions);
 */
import type { CanonicalCurve, CaptureFormat, ParseOptions } from '../../src/lib/signature/types';

export type Rng = () => number;

/** mulberry32: a small, fast 32-bit generator, good enough for test data. Returns [0, 1). */
export function seededRandom(seed: number): Rng {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

/** Standard normal deviate (Box–Muller). */
export function gaussian(rng: Rng): number {
	let u = rng();
	while (u <= 1e-300) u = rng();
	return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng());
}

/** Uniform in [lo, hi). */
export function uniform(rng: Rng, lo: number, hi: number): number {
	return lo + (hi - lo) * rng();
}

/** Log-uniform in [lo, hi). */
export function logUniform(rng: Rng, lo: number, hi: number): number {
	return Math.exp(uniform(rng, Math.log(lo), Math.log(hi)));
}

export function pick<T>(rng: Rng, items: readonly T[]): T {
	return items[Math.floor(rng() * items.length) % items.length];
}

export interface SynthesisOptions {
	rng: Rng;
	/** Samples per period (default: log-uniform 50…5000). */
	samplesPerPeriod?: number;
	/** Periods in the capture, usually not whole (default: uniform 1.3…20). */
	periods?: number;
	/** Source phase of the first sample, radians (default: uniform 0…2π). */
	startPhase?: number;
	/** RMS white noise on each channel as a fraction of its full scale (Vs, Vs/Rs); default 0.01. */
	noise?: number;
	/**
	 * ADC resolution in bits over ±1.25 × the channel's own peak (as a scope's vertical scale would be
	 * set); 0 = no quantisation. Default 12.
	 */
	bits?: number;
	/** The true source frequency differs from the entered one by this fraction (default 0). */
	frequencyError?: number;
}

/** True, SI samples of a synthetic capture. */
export interface SynthSamples {
	t: number[];
	v: number[];
	i: number[];
	/** The settings actually used. */
	samplesPerPeriod: number;
	periods: number;
	startPhase: number;
}

function interpolatePeriodic(values: readonly number[], theta: number): number {
	const n = values.length;
	let x = (theta / (2 * Math.PI)) * n;
	x -= Math.floor(x / n) * n;
	const k = Math.floor(x);
	const frac = x - k;
	const a = values[k % n];
	const b = values[(k + 1) % n];
	return a + (b - a) * frac;
}

function quantiser(values: number[], bits: number): (x: number) => number {
	if (!bits) return (x) => x;
	let peak = 0;
	for (const x of values) peak = Math.max(peak, Math.abs(x));
	if (peak === 0) return (x) => x;
	const step = (2.5 * peak) / 2 ** bits;
	return (x) => Math.round(x / step) * step;
}

/** Samples a canonical curve the way a bench would: see the module comment. */
export function synthesiseSamples(curve: CanonicalCurve, options: SynthesisOptions): SynthSamples {
	const { rng } = options;
	const spp = options.samplesPerPeriod ?? Math.round(logUniform(rng, 50, 5000));
	const periods = options.periods ?? uniform(rng, 1.3, 20);
	const startPhase = options.startPhase ?? uniform(rng, 0, 2 * Math.PI);
	const noise = options.noise ?? 0.01;
	const bits = options.bits ?? 12;
	const c = curve.conditions;
	const f = c.frequencyHz * (1 + (options.frequencyError ?? 0));
	let count = Math.round(spp * periods);
	if (count % 2 === 0) count += 1; // odd sample counts catch off-by-one assumptions
	const dt = 1 / (c.frequencyHz * spp);
	const vScale = c.sourcePeakV;
	const iScale = c.sourcePeakV / c.sourceResistanceOhm;
	const t: number[] = new Array(count);
	const v: number[] = new Array(count);
	const i: number[] = new Array(count);
	for (let k = 0; k < count; k++) {
		const tk = k * dt;
		const theta = startPhase + 2 * Math.PI * f * tk;
		t[k] = tk;
		v[k] = interpolatePeriodic(curve.v, theta) + noise * vScale * gaussian(rng);
		i[k] = interpolatePeriodic(curve.i, theta) + noise * iScale * gaussian(rng);
	}
	const qv = quantiser(v, bits);
	const qi = quantiser(i, bits);
	for (let k = 0; k < count; k++) {
		v[k] = qv(v[k]);
		i[k] = qi(i[k]);
	}
	return { t, v, i, samplesPerPeriod: spp, periods, startPhase };
}

// ---------------------------------------------------------------------------------------------
// File styles

export type Delimiter = ',' | ';' | '\t' | ' ';
export type VoltageUnit = 'V' | 'mV';
export type CurrentUnit = 'A' | 'mA' | 'uA' | 'µA';
export type TimeUnit = 's' | 'ms' | 'us';

export interface ViCsvStyle {
	format: 'vi-csv';
	delimiter: Delimiter;
	/** How the header is written, or null for no header (units then go into parseOptions). */
	header: 'plain' | 'parens' | 'brackets' | 'underscore' | 'words' | 'letters' | null;
	voltageUnit: VoltageUnit;
	currentUnit: CurrentUnit;
	/** Write a time column first (only with a header). */
	withTime: boolean;
	/** Current column before the voltage column (only with a header). */
	currentFirst: boolean;
	crlf: boolean;
	bom: boolean;
	/** `#` comment lines at the top and a blank line or two. */
	comments: boolean;
	/** Decimal commas (only with `;` delimiters). */
	decimalComma: boolean;
}

export interface ScopeCsvStyle {
	format: 'scope-csv';
	delimiter: ',' | ';' | '\t';
	/** Ohms of the sense resistor in the current path. */
	senseOhm: number;
	/** State the sense resistance in the preamble (otherwise it goes into parseOptions). */
	senseInPreamble: boolean;
	/** Write the sample interval in the preamble and leave out the time column. */
	intervalOnly: boolean;
	/** The sense channel comes first (parseOptions.swapChannels is set). */
	swapped: boolean;
	/** Channel voltages in mV. */
	millivolts: boolean;
	timeUnit: TimeUnit;
	crlf: boolean;
	bom: boolean;
	decimalComma: boolean;
}

export interface JsonStyle {
	format: 'json';
	/** `vi`: {"v","i"}; `tvi`: {"t","v","i"}; `scope`: {"t","ch1","ch2","senseOhm"}. */
	variant: 'vi' | 'tvi' | 'scope';
	senseOhm: number;
	pretty: boolean;
}

export type CaptureStyle = ViCsvStyle | ScopeCsvStyle | JsonStyle;

export interface WrittenCapture {
	text: string;
	style: CaptureStyle;
	/** Options the parser needs for this file (what a user would enter beside the upload). */
	parseOptions: ParseOptions;
	/** Number of data rows written. */
	count: number;
}

const V_SCALE: Record<VoltageUnit, number> = { V: 1, mV: 1e3 };
const I_SCALE: Record<CurrentUnit, number> = { A: 1, mA: 1e3, uA: 1e6, µA: 1e6 };
const T_SCALE: Record<TimeUnit, number> = { s: 1, ms: 1e3, us: 1e6 };

/** Shortest text that round-trips the value to 7 significant figures, as instruments write. */
function num(x: number, decimalComma: boolean): string {
	const s = Number(x.toPrecision(7)).toString();
	return decimalComma ? s.replace('.', ',') : s;
}

function header(style: ViCsvStyle, vu: string, iu: string): string[] {
	switch (style.header) {
		case 'plain':
			return ['time', 'voltage', 'current'];
		case 'parens':
			return ['Time (s)', `Voltage (${vu})`, `Current (${iu})`];
		case 'brackets':
			return ['t [s]', `U [${vu}]`, `I [${iu}]`];
		case 'underscore':
			return ['time_s', `voltage_${vu}`, `current_${iu}`];
		case 'words':
			return ['Time', `Voltage ${vu}`, `Current ${iu}`];
		case 'letters':
			return ['t', vu, iu];
		default:
			return [];
	}
}

function joinLines(lines: string[], crlf: boolean, bom: boolean): string {
	return (bom ? '\uFEFF' : '') + lines.join(crlf ? '\r\n' : '\n') + (crlf ? '\r\n' : '\n');
}

/** Writes true SI samples as a file in the given style. */
export function writeCapture(samples: SynthSamples, style: CaptureStyle): WrittenCapture {
	const n = samples.v.length;
	if (style.format === 'json') {
		const senseOhm = style.senseOhm;
		let body: unknown;
		if (style.variant === 'vi') body = { v: samples.v, i: samples.i };
		else if (style.variant === 'tvi') body = { t: samples.t, v: samples.v, i: samples.i };
		else
			body = {
				t: samples.t,
				ch1: samples.v,
				ch2: samples.i.map((x) => x * senseOhm),
				senseOhm
			};
		const text = style.pretty ? JSON.stringify(body, null, 2) : JSON.stringify(body);
		return { text, style, parseOptions: {}, count: n };
	}
	if (style.format === 'vi-csv') {
		const d = style.delimiter;
		const dc = style.decimalComma && d === ';';
		const vs = V_SCALE[style.voltageUnit];
		const is = I_SCALE[style.currentUnit];
		const lines: string[] = [];
		if (style.comments) {
			lines.push('# V-I capture', '# probe 1 to probe 2', '');
		}
		const parseOptions: ParseOptions = {};
		const withTime = style.header !== null && style.withTime;
		const currentFirst = style.header !== null && style.currentFirst;
		if (style.header) {
			const [th, vh, ih] = header(style, style.voltageUnit, style.currentUnit);
			const cols = currentFirst ? [ih, vh] : [vh, ih];
			lines.push((withTime ? [th, ...cols] : cols).join(d));
		}
		if (style.header === null || style.header === 'plain') {
			// No unit in the header: the user states it beside the upload.
			if (style.voltageUnit !== 'V') parseOptions.voltageUnit = style.voltageUnit;
			if (style.currentUnit !== 'A')
				parseOptions.currentUnit = style.currentUnit === 'µA' ? 'uA' : style.currentUnit;
		}
		for (let k = 0; k < n; k++) {
			const vv = num(samples.v[k] * vs, dc);
			const ii = num(samples.i[k] * is, dc);
			const cols = currentFirst ? [ii, vv] : [vv, ii];
			if (withTime) cols.unshift(num(samples.t[k], dc));
			lines.push(cols.join(d));
		}
		return { text: joinLines(lines, style.crlf, style.bom), style, parseOptions, count: n };
	}
	// scope-csv
	const d = style.delimiter;
	const dc = style.decimalComma && d === ';';
	const chScale = style.millivolts ? 1e3 : 1;
	const unit = style.millivolts ? 'mV' : 'V';
	const ts = T_SCALE[style.timeUnit];
	const dt = samples.t.length > 1 ? samples.t[1] - samples.t[0] : 0;
	const lines: string[] = [];
	lines.push(`Instrument${d}bench scope`);
	lines.push(`Record length${d}${n}`);
	if (style.intervalOnly) lines.push(`Sample interval${d}${num(dt, dc)}`);
	if (style.senseInPreamble) lines.push(`Sense resistance${d}${num(style.senseOhm, dc)} ohm`);
	lines.push(`Vertical units${d}${unit}`);
	const parseOptions: ParseOptions = {};
	if (!style.senseInPreamble) parseOptions.senseOhm = style.senseOhm;
	if (style.swapped) parseOptions.swapChannels = true;
	const chHeads = [`CH1 (${unit})`, `CH2 (${unit})`];
	lines.push((style.intervalOnly ? chHeads : [`Time (${style.timeUnit})`, ...chHeads]).join(d));
	for (let k = 0; k < n; k++) {
		const dut = num(samples.v[k] * chScale, dc);
		const sense = num(samples.i[k] * style.senseOhm * chScale, dc);
		const chans = style.swapped ? [sense, dut] : [dut, sense];
		if (!style.intervalOnly) chans.unshift(num(samples.t[k] * ts, dc));
		lines.push(chans.join(d));
	}
	return { text: joinLines(lines, style.crlf, style.bom), style, parseOptions, count: n };
}

/** A random style of the given format (or of a random format). */
export function randomStyle(rng: Rng, format?: CaptureFormat): CaptureStyle {
	const fmt = format ?? pick(rng, ['vi-csv', 'scope-csv', 'json'] as const);
	if (fmt === 'json') {
		return {
			format: 'json',
			variant: pick(rng, ['vi', 'tvi', 'scope'] as const),
			senseOhm: pick(rng, [1, 10, 47, 100]),
			pretty: rng() < 0.3
		};
	}
	if (fmt === 'scope-csv') {
		const delimiter = pick(rng, [',', ';', '\t'] as const);
		return {
			format: 'scope-csv',
			delimiter,
			senseOhm: pick(rng, [1, 10, 47, 100]),
			senseInPreamble: rng() < 0.6,
			intervalOnly: rng() < 0.25,
			swapped: rng() < 0.25,
			millivolts: rng() < 0.3,
			timeUnit: pick(rng, ['s', 'ms', 'us'] as const),
			crlf: rng() < 0.4,
			bom: rng() < 0.2,
			decimalComma: delimiter === ';' && rng() < 0.6
		};
	}
	const delimiter = pick(rng, [',', ';', '\t', ' '] as const);
	return {
		format: 'vi-csv',
		delimiter,
		header: pick(rng, ['plain', 'parens', 'brackets', 'underscore', 'words', 'letters', null] as const),
		voltageUnit: pick(rng, ['V', 'V', 'mV'] as const),
		currentUnit: pick(rng, ['A', 'mA', 'mA', 'uA', 'µA'] as const),
		withTime: rng() < 0.3,
		currentFirst: rng() < 0.15,
		crlf: rng() < 0.4,
		bom: rng() < 0.2,
		comments: rng() < 0.3,
		decimalComma: delimiter === ';' && rng() < 0.6
	};
}

export interface SynthesisedCapture extends WrittenCapture {
	samples: SynthSamples;
}

/** Samples a curve like a bench and writes it as a file: see `synthesiseSamples`, `writeCapture`. */
export function synthesiseCapture(
	curve: CanonicalCurve,
	options: SynthesisOptions & { style?: CaptureStyle; format?: CaptureFormat }
): SynthesisedCapture {
	const samples = synthesiseSamples(curve, options);
	const style = options.style ?? randomStyle(options.rng, options.format);
	return { ...writeCapture(samples, style), samples };
}
