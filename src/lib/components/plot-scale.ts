/**
 * The numbers behind the signature plot, free of any drawing library: the test's full scale, tick
 * positions and their labels with engineering prefixes, keyboard zoom and pan, and closing a curve
 * into a loop. Pure functions of plain values.
 */
import { engineeringPrefix, formatConditions, formatSI } from '../signature/format';
import type { TestConditions } from '../signature/types';

/** A closed interval [min, max] on one axis, SI units. */
export type Range = readonly [min: number, max: number];

export interface FullScale {
	/** Volts: ±Vs. */
	v: Range;
	/** Amperes: ±Vs/Rs, the short-circuit current. */
	i: Range;
}

/**
 * The full scale of a test (DESIGN.md, "test conditions"): ±Vs horizontally and ±Vs/Rs vertically.
 * A device can never drive the point beyond these, so they frame every curve of that test.
 */
export function fullScale(conditions: TestConditions): FullScale {
	const vs = Math.abs(conditions.sourcePeakV);
	const isc = vs / Math.abs(conditions.sourceResistanceOhm);
	return { v: [-vs, vs], i: [-isc, isc] };
}

/**
 * Tick step for a range: 1, 2 or 5 × 10ⁿ (common practice, no source), the smallest such step
 * that gives at most `maxTicks` ticks.
 */
export function tickStep(range: Range, maxTicks: number): number {
	const span = range[1] - range[0];
	if (!(span > 0) || !Number.isFinite(span)) return 0;
	const wanted = Math.max(1, Math.floor(maxTicks) - 1);
	const raw = span / wanted;
	const decade = 10 ** Math.floor(Math.log10(raw));
	for (const m of [1, 2, 5, 10]) {
		const step = m * decade;
		if (span / step <= wanted + 1e-9) return step;
	}
	return 10 * decade;
}

/**
 * Ticks at whole multiples of the step inside the range (both ends included when they fall on a
 * multiple). Zero is always a multiple, so a range that spans zero always gets a zero tick.
 */
export function ticks(range: Range, maxTicks: number): number[] {
	const step = tickStep(range, maxTicks);
	if (step === 0) return [range[0]];
	const first = Math.ceil(range[0] / step - 1e-9);
	const last = Math.floor(range[1] / step + 1e-9);
	const out: number[] = [];
	for (let k = first; k <= last; k++) {
		// Multiply rather than accumulate, and trim binary noise (0.1 + 0.2).
		out.push(Number((k * step).toPrecision(12)) || 0);
	}
	return out;
}


/**
 * The engineering prefix for an axis whose largest tick magnitude is `maxAbs`: the largest power
 * of 10³ not above it (BIPM SI Brochure, prefixes), so 2.7e-3 reads as 2.7 mA, not 0.0027 A.
 */
export function axisPrefix(maxAbs: number): { scale: number; prefix: string } {
	const abs = Math.abs(maxAbs);
	if (!(abs > 0) || !Number.isFinite(abs)) return { scale: 1, prefix: '' };
	return engineeringPrefix(abs);
}

/**
 * Labels for one axis's ticks, all with the same prefix (chosen from the largest tick) and just
 * enough decimals to tell neighbouring ticks apart: [-0.01, -0.005, 0, 0.005, 0.01] A →
 * ["-10 mA", "-5 mA", "0", "5 mA", "10 mA"]. Zero is written without a unit.
 */
export function tickLabels(values: readonly number[], unit: string): string[] {
	if (values.length === 0) return [];
	const maxAbs = Math.max(...values.map(Math.abs));
	const { scale, prefix } = axisPrefix(maxAbs);
	const step = values.length > 1 ? Math.abs(values[1] - values[0]) / scale : 0;
	const decimals = step > 0 ? Math.max(0, Math.min(6, Math.ceil(-Math.log10(step) - 1e-9))) : 0;
	return values.map((v) => {
		if (v === 0) return '0';
		const text = (v / scale).toFixed(decimals);
		return `${text} ${prefix}${unit}`;
	});
}

/**
 * The range after zooming by `factor` (< 1 zooms in, > 1 out) about `centre` (default: the middle),
 * never wider than `limit` and shifted back inside it when it would stick out.
 */
export function zoomRange(range: Range, factor: number, limit: Range, centre?: number): Range {
	const c = centre ?? (range[0] + range[1]) / 2;
	const limitSpan = limit[1] - limit[0];
	const span = Math.min((range[1] - range[0]) * factor, limitSpan);
	const lower = c - (c - range[0]) * (span / (range[1] - range[0]));
	return clampInto([lower, lower + span], limit);
}

/** The range moved by `fraction` of its own width (positive: towards max), kept inside `limit`. */
export function panRange(range: Range, fraction: number, limit: Range): Range {
	const shift = (range[1] - range[0]) * fraction;
	return clampInto([range[0] + shift, range[1] + shift], limit);
}

function clampInto(range: Range, limit: Range): Range {
	const span = range[1] - range[0];
	if (span >= limit[1] - limit[0]) return limit;
	if (range[0] < limit[0]) return [limit[0], limit[0] + span];
	if (range[1] > limit[1]) return [limit[1] - span, limit[1]];
	return range;
}

/**
 * One period drawn as a loop: the points in order with the first repeated at the end (unless the
 * curve already ends where it starts). Points with a non-finite coordinate are dropped.
 */
export function closeCurve(v: readonly number[], i: readonly number[]): [number[], number[]] {
	const xs: number[] = [];
	const ys: number[] = [];
	const n = Math.min(v.length, i.length);
	for (let k = 0; k < n; k++) {
		if (Number.isFinite(v[k]) && Number.isFinite(i[k])) {
			xs.push(v[k]);
			ys.push(i[k]);
		}
	}
	if (xs.length > 1 && (xs[0] !== xs[xs.length - 1] || ys[0] !== ys[ys.length - 1])) {
		xs.push(xs[0]);
		ys.push(ys[0]);
	}
	return [xs, ys];
}

/** Smallest and largest finite value, or `null` for none. */
export function extent(values: readonly number[]): Range | null {
	let min = Infinity;
	let max = -Infinity;
	for (const x of values) {
		if (!Number.isFinite(x)) continue;
		if (x < min) min = x;
		if (x > max) max = x;
	}
	return min <= max ? [min, max] : null;
}

/** How each curve role is named to people. */
export const ROLE_NAMES = {
	fault: 'Fault',
	'known-good': 'Known-good',
	other: 'Other',
	query: 'Capture'
} as const;

export interface SummaryCurve {
	label: string;
	role: keyof typeof ROLE_NAMES;
	v: readonly number[];
	i: readonly number[];
}

/**
 * The plot in words, for screen readers and for the server-rendered placeholder: conditions, full
 * scale, and each curve's role, label and the span of its voltage and current.
 */
export function plotSummary(curves: readonly SummaryCurve[], conditions: TestConditions): string[] {
	const full = fullScale(conditions);
	const lines = [
		`V-I plot at ${formatConditions(conditions)}; full scale ±${formatSI(full.v[1], 'V')} and ±${formatSI(full.i[1], 'A')}.`
	];
	if (curves.length === 0) lines.push('No curves.');
	for (const c of curves) {
		const v = extent(c.v);
		const i = extent(c.i);
		const span = (r: Range | null, unit: string) =>
			r ? `${formatSI(r[0], unit)} to ${formatSI(r[1], unit)}` : 'no values';
		lines.push(`${ROLE_NAMES[c.role]}, ${c.label}: voltage ${span(v, 'V')}, current ${span(i, 'A')}.`);
	}
	return lines;
}
