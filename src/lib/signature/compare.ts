/**
 * Shape distance between canonical curves, the similarity people read, and a compact descriptor
 * for finding candidates fast.
 *
 * The distance lives in the normalised plane (vn = V/Vs, in = I/(Vs/Rs)), where a curve's geometry
 * is what a technician sees on the screen. The canonical grid already fixes the phase (point k at
 * source phase 2πk/N, from the identity e = V + I·Rs), so corresponding points are compared
 * directly: the distance is the RMS per axis of the point-to-point differences. A small circular
 * shift search (circular cross-correlation over ±MAX_SHIFT_POINTS, refined between grid points by
 * a parabola through the three best shifts) absorbs what is left of phase estimation error.
 *
 * Why this and not a purely geometric distance (discrete Fréchet, Hausdorff): point-to-point
 * distance on a phase grid also separates curves that trace the same path at a different pace (a
 * resistor and a slightly leaky capacitor of the same slope), it costs O(N) per shift, and by
 * Parseval's theorem it equals the Euclidean distance of the curves' Fourier coefficients, which is
 * what makes the descriptor below track it.
 */
import type { CanonicalCurve, Comparison, TestConditions } from './types';

/** Circular shifts tried either way, in grid points (4 of 256 ≈ 5.6° of source phase). */
export const MAX_SHIFT_POINTS = 4;

/** Harmonics of u = (vn − in)/2 kept in the descriptor. */
const DESCRIPTOR_HARMONICS = 30;

/**
 * Length of `descriptor`: u's mean and harmonics 1…30 (61 numbers) plus w = (vn + in)/2's mean and
 * fundamental (3 numbers). w ≈ sin θ / 2 for every curve (the source identity), so its higher
 * harmonics carry only noise and are left out.
 */
export const DESCRIPTOR_LENGTH = 1 + 2 * DESCRIPTOR_HARMONICS + 3;

/**
 * Relative tolerances within which two curves' test conditions count as comparable: Vs, Rs and f
 * each within 5 % (ratio of the larger to the smaller). A resistor's normalised slope moves with
 * R/Rs, a reactance with f, a knee's normalised position with Vs; 5 % keeps the effect of a
 * mismatch under half the ≈ 10 % step between neighbouring E24 standard values, so a mismatch can
 * never make one standard value look like its neighbour. 50 Hz against 60 Hz (20 %) is not
 * comparable.
 */
export const CONDITION_TOLERANCE = { sourcePeakV: 0.05, sourceResistanceOhm: 0.05, frequencyHz: 0.05 };

/**
 * Distance at which similarity falls to 50. 0.08 of full scale RMS: two bench captures of one
 * part stay within about 0.01 of each other (similarity ≈ 96), 2.2 kΩ against 2.7 kΩ at
 * Rs = 1 kΩ is 0.030 (≈ 81), a resistor against a junction ≈ 0.3 (≈ 12), an open against a
 * short 0.71 (≈ 4).
 */
export const SIMILARITY_HALF_DISTANCE = 0.08;

export function conditionsComparable(a: TestConditions, b: TestConditions): boolean {
	const within = (x: number, y: number, tol: number) =>
		x > 0 && y > 0 && Math.max(x, y) / Math.min(x, y) - 1 <= tol + 1e-12;
	return (
		within(a.sourcePeakV, b.sourcePeakV, CONDITION_TOLERANCE.sourcePeakV) &&
		within(a.sourceResistanceOhm, b.sourceResistanceOhm, CONDITION_TOLERANCE.sourceResistanceOhm) &&
		within(a.frequencyHz, b.frequencyHz, CONDITION_TOLERANCE.frequencyHz)
	);
}

/** 0–100 from a shape distance: 100 at 0, 50 at SIMILARITY_HALF_DISTANCE, falling as d^-1.5. */
export function similarityOf(distance: number): number {
	if (!(distance > 0)) return 100;
	return 100 / (1 + (distance / SIMILARITY_HALF_DISTANCE) ** 1.5);
}

/**
 * Shape distance in the normalised plane: the smallest, over circular shifts of ±MAX_SHIFT_POINTS,
 * RMS per axis of the point-to-point differences, sqrt(Σ(Δvn² + Δin²) / 2N). 0 for identical
 * curves; two curves on opposite corners of full scale are ≈ 1 apart.
 */
export function shapeDistance(a: CanonicalCurve, b: CanonicalCurve): number {
	const n = a.vn.length;
	const bv = b.vn.length === n ? b.vn : resample(b.vn, n);
	const bi = b.in.length === n ? b.in : resample(b.in, n);
	const av = a.vn;
	const ai = a.in;
	const shifts = Math.min(MAX_SHIFT_POINTS, Math.floor(n / 4));
	const d2 = new Float64Array(2 * shifts + 1);
	let best = 0;
	for (let s = -shifts; s <= shifts; s++) {
		let acc = 0;
		for (let k = 0; k < n; k++) {
			let j = k + s;
			if (j < 0) j += n;
			else if (j >= n) j -= n;
			const dv = av[k] - bv[j];
			const di = ai[k] - bi[j];
			acc += dv * dv + di * di;
		}
		d2[s + shifts] = acc / (2 * n);
		if (d2[s + shifts] < d2[best]) best = s + shifts;
	}
	let min = d2[best];
	if (best > 0 && best < d2.length - 1) {
		// Parabola through the best shift and its neighbours: the minimum between grid points.
		const l = d2[best - 1];
		const r = d2[best + 1];
		const curvature = l - 2 * min + r;
		if (curvature > 0) min = Math.max(0, min - ((r - l) * (r - l)) / (8 * curvature));
	}
	return Math.sqrt(Math.max(0, min));
}

/**
 * Compares two curves. Curves under non-comparable conditions are still compared in normalised
 * form and marked `comparable: false`.
 */
export function compare(a: CanonicalCurve, b: CanonicalCurve): Comparison {
	const distance = shapeDistance(a, b);
	return {
		distance,
		similarity: similarityOf(distance),
		comparable: conditionsComparable(a.conditions, b.conditions)
	};
}

const tables = new Map<number, { cos: Float64Array; sin: Float64Array }>();
function trig(n: number) {
	let t = tables.get(n);
	if (!t) {
		t = { cos: new Float64Array(n), sin: new Float64Array(n) };
		for (let k = 0; k < n; k++) {
			t.cos[k] = Math.cos((2 * Math.PI * k) / n);
			t.sin[k] = Math.sin((2 * Math.PI * k) / n);
		}
		tables.set(n, t);
	}
	return t;
}

/**
 * A fixed-length vector whose Euclidean distance approximates shapeDistance at zero shift.
 *
 * By Parseval's theorem, (1/2N)·Σ(Δvn² + Δin²) = (1/N)·Σ(Δu² + Δw²) with u = (vn − in)/2 and
 * w = (vn + in)/2, and (1/N)·Σx² = X0² + ½·Σ|Xh|² over harmonics h ≥ 1 (Xh the DFT coefficient
 * scaled by 2/N). The descriptor holds X0 and Xh/√2 (real and imaginary parts) for the harmonics
 * that carry a curve's shape, so its distance is the exact distance with the highest harmonics
 * truncated: never larger, and close wherever curves differ in their broad shape. These are the
 * low-order Fourier descriptors of the trajectory (elliptic Fourier descriptors in the rotated
 * coordinates u, w).
 */
export function descriptor(curve: CanonicalCurve): Float32Array {
	const n0 = curve.vn.length;
	const vn = n0 >= 2 * DESCRIPTOR_HARMONICS + 2 ? curve.vn : resample(curve.vn, 256);
	const cn = n0 >= 2 * DESCRIPTOR_HARMONICS + 2 ? curve.in : resample(curve.in, 256);
	const n = vn.length;
	const { cos, sin } = trig(n);
	const u = new Float64Array(n);
	const w = new Float64Array(n);
	for (let k = 0; k < n; k++) {
		u[k] = (vn[k] - cn[k]) / 2;
		w[k] = (vn[k] + cn[k]) / 2;
	}
	const out = new Float32Array(DESCRIPTOR_LENGTH);
	const scale = Math.SQRT2 / n; // (2/N)/√2
	let pos = 0;
	out[pos++] = mean(u);
	for (let h = 1; h <= DESCRIPTOR_HARMONICS; h++) {
		let re = 0;
		let im = 0;
		for (let k = 0, idx = 0; k < n; k++, idx += h) {
			if (idx >= n) idx -= n;
			re += u[k] * cos[idx];
			im -= u[k] * sin[idx];
		}
		out[pos++] = re * scale;
		out[pos++] = im * scale;
	}
	out[pos++] = mean(w);
	let re = 0;
	let im = 0;
	for (let k = 0; k < n; k++) {
		re += w[k] * cos[k];
		im -= w[k] * sin[k];
	}
	out[pos++] = re * scale;
	out[pos++] = im * scale;
	return out;
}

/**
 * The curve's energy beyond its descriptor: sqrt of (1/2N)·Σ(vn² + in²) minus the descriptor's
 * squared norm (Parseval), i.e. the harmonics the descriptor leaves out — on a bench capture mostly
 * noise. For two curves with uncorrelated noise the exact squared distance is close to the
 * descriptor's squared distance plus both tails squared, which lets a candidate search rank like the
 * exact distance among near neighbours.
 */
export function descriptorTail(curve: CanonicalCurve, d: ArrayLike<number> = descriptor(curve)): number {
	const n = curve.vn.length;
	let total = 0;
	for (let k = 0; k < n; k++) total += curve.vn[k] ** 2 + curve.in[k] ** 2;
	total /= 2 * n;
	let kept = 0;
	for (let k = 0; k < d.length; k++) kept += d[k] * d[k];
	return Math.sqrt(Math.max(0, total - kept));
}

/** Euclidean distance between two descriptors. */
export function descriptorDistance(a: ArrayLike<number>, b: ArrayLike<number>): number {
	let s = 0;
	for (let k = 0; k < a.length; k++) {
		const d = a[k] - b[k];
		s += d * d;
	}
	return Math.sqrt(s);
}

function mean(x: ArrayLike<number>): number {
	let s = 0;
	for (let k = 0; k < x.length; k++) s += x[k];
	return s / x.length;
}

/** Periodic linear interpolation onto n points (for curves of another length). */
function resample(x: number[], n: number): number[] {
	const m = x.length;
	const out = new Array<number>(n);
	for (let k = 0; k < n; k++) {
		const pos = (k * m) / n;
		const j = Math.floor(pos);
		const frac = pos - j;
		out[k] = x[j % m] * (1 - frac) + x[(j + 1) % m] * frac;
	}
	return out;
}
