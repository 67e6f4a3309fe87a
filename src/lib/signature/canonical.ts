/**
 * Canonical form: raw samples of any number of periods (not necessarily whole, starting anywhere,
 * with noise) → one period on a fixed grid, uniformly spaced in source phase.
 *
 * Method:
 * 1. The tester is a sine source e = Vs·sin θ in series with Rs and the device, so every sample gives
 *    e = v + i·Rs, whatever the device does. We fit a sine to e and read each sample's source phase
 *    θ off the fit; no assumption about the device's curve is needed (open: e ≈ v; short: e ≈ i·Rs).
 * 2. The sine fit is the four-parameter least-squares sine fit (IEEE Std 1057 / 1241), solved by
 *    variable projection: for a trial angular frequency ω the amplitude pair and offset follow from
 *    a linear least-squares fit, so only ω is searched. To keep 100 000-sample captures fast the
 *    search runs on block means of e (≤ 1024 blocks; averaging over a block is symmetric, so it does
 *    not shift the phase):
 *    - without a time column the samples are taken as evenly spaced and the period comes from the
 *      data's own periodicity: a scan of 0.8…64 cycles per record in steps of 0.2 cycle (a
 *      periodogram made of least-squares fits, which unlike a plain DFT stays unbiased at 1.3
 *      periods), refined by a parabola through the best three, then by golden-section search;
 *    - with a time column the search starts at the entered f (so a source a little off its nominal
 *      frequency is still followed) and is kept unless the data's own periodicity fits clearly
 *      better — then a warning says the time column does not match f.
 * 3. Every sample is put on the phase grid (N points, default 256, point 0 at the source's upward
 *    zero crossing): it falls into the bin of its nearest grid point, and each bin keeps the means of
 *    its samples' phase offsets, v and i. The grid is then read off these bin means by periodic linear
 *    interpolation in phase. Dense captures thus average hundreds of samples per point; sparse ones
 *    (50 samples a period) interpolate between the samples of all periods, which interleave in phase.
 *    Every sample counts, including those of the partial periods at the ends.
 * 4. `periods` is the number of whole periods the capture spans. `periodSpread` compares the whole
 *    periods with each other on a coarse grid (4…64 bins, ≥ 4 samples a bin): the RMS, over bins,
 *    periods and both axes, of each period's bin mean minus the mean of all periods, as a fraction
 *    of full scale (Vs, Vs/Rs). It includes what noise survives the bin averaging.
 *    `noise` estimates each grid point's noise from the samples' own scatter (robust second
 *    differences in time order, reduced by the number of samples averaged into a point), which
 *    stays right when a sparse capture's curve is interpolated and looks smoother than it is.
 * 5. Warnings for the technician: the reconstructed source's amplitude is not Vs, or it is not a
 *    clean sine (its distortion, after removing the white noise estimated from sample-to-sample
 *    differences, exceeds 3 % of Vs) — wrong Rs, Vs or units entered; a DC offset; the time column
 *    disagrees with f; a channel that sits at its extreme value for ≥ 5 % of the samples while the
 *    source reconstructed there departs from the sine (clipped — a junction's zero reverse current
 *    or a zener's held voltage keeps the identity and is not reported); periods that disagree (the
 *    part or probes moved).
 * 6. A current recorded the wrong way round (sense resistor or probe reversed) is turned back with
 *    a warning, when V − I·Rs carries the source instead of V + I·Rs and the part as recorded would
 *    give out power (`currentLooksInverted`).
 */
import { testConditions } from './conditions';
import { toCanonical } from './curve';
import { SignatureError } from './errors';
import type { CanonicalCurve, ParsedCapture, Samples, TestConditions } from './types';
import { CANONICAL_POINTS } from './types';

const TWO_PI = 2 * Math.PI;
const MIN_SAMPLES = 32;
const MAX_BLOCKS = 1024;

interface Blocks {
	x: Float64Array;
	y: Float64Array;
	w: Float64Array;
	n: number;
}

/** Block means of y over ≤ MAX_BLOCKS consecutive runs of samples, weighted by their counts. */
function blockMeans(x: ArrayLike<number> | null, y: ArrayLike<number>): Blocks {
	const n = y.length;
	const d = Math.min(n, MAX_BLOCKS);
	const bx = new Float64Array(d);
	const by = new Float64Array(d);
	const bw = new Float64Array(d);
	for (let b = 0; b < d; b++) {
		const lo = Math.floor((b * n) / d);
		const hi = Math.floor(((b + 1) * n) / d);
		let sx = 0;
		let sy = 0;
		for (let k = lo; k < hi; k++) {
			sx += x ? x[k] : k;
			sy += y[k];
		}
		const c = hi - lo;
		bx[b] = sx / c;
		by[b] = sy / c;
		bw[b] = c;
	}
	return { x: bx, y: by, w: bw, n: d };
}

/** Solves the 3×3 symmetric system [a b c; b d e; c e f]·p = r; null when singular. */
function solve3(m: number[], r: number[]): [number, number, number] | null {
	const [a, b, c, d, e, f] = m;
	const A = d * f - e * e;
	const B = c * e - b * f;
	const C = b * e - c * d;
	const det = a * A + b * B + c * C;
	if (!(Math.abs(det) > 1e-300)) return null;
	const D = a * f - c * c;
	const E = b * c - a * e;
	const F = a * d - b * b;
	return [
		(A * r[0] + B * r[1] + C * r[2]) / det,
		(B * r[0] + D * r[1] + E * r[2]) / det,
		(C * r[0] + E * r[1] + F * r[2]) / det
	];
}

interface SineFit {
	/** Angular frequency per unit of x. */
	omega: number;
	/** e ≈ amp·sin(ω(x − x0) + phase) + offset. */
	amp: number;
	phase: number;
	offset: number;
	/** Weighted sum of squared residuals and total sum of squares about the mean. */
	sse: number;
	sst: number;
}

/** Three-parameter least-squares sine fit at a fixed ω on weighted points (x measured from x0). */
function fitAt(bl: Blocks, x0: number, omega: number, sst: number): SineFit {
	let scc = 0;
	let scs = 0;
	let sc1 = 0;
	let sss = 0;
	let ss1 = 0;
	let s11 = 0;
	let ryc = 0;
	let rys = 0;
	let ry1 = 0;
	let ryy = 0;
	for (let k = 0; k < bl.n; k++) {
		const ph = omega * (bl.x[k] - x0);
		const c = Math.cos(ph);
		const s = Math.sin(ph);
		const w = bl.w[k];
		const y = bl.y[k];
		scc += w * c * c;
		scs += w * c * s;
		sc1 += w * c;
		sss += w * s * s;
		ss1 += w * s;
		s11 += w;
		ryc += w * y * c;
		rys += w * y * s;
		ry1 += w * y;
		ryy += w * y * y;
	}
	const p = solve3([scc, scs, sc1, sss, ss1, s11], [ryc, rys, ry1]);
	if (!p) return { omega, amp: 0, phase: 0, offset: 0, sse: sst, sst };
	const [a, b, c] = p;
	const sse = Math.max(0, ryy - (a * ryc + b * rys + c * ry1));
	// a·cos + b·sin = amp·sin(· + phase) with amp·sin(phase) = a, amp·cos(phase) = b.
	return { omega, amp: Math.hypot(a, b), phase: Math.atan2(a, b), offset: c, sse, sst };
}

/** Weighted total sum of squares about the mean. */
function totalSquares(bl: Blocks): number {
	let sw = 0;
	let sy = 0;
	for (let k = 0; k < bl.n; k++) {
		sw += bl.w[k];
		sy += bl.w[k] * bl.y[k];
	}
	const mean = sy / sw;
	let s = 0;
	for (let k = 0; k < bl.n; k++) s += bl.w[k] * (bl.y[k] - mean) ** 2;
	return s;
}

/**
 * Periodogram of least-squares sine fits over cycles-per-record c ∈ [cMin, cMax], on the blocks
 * taken as evenly spaced (sines by rotation recurrence). Returns the best c, parabola-refined, and
 * the fraction of the variance it explains.
 */
function scanCycles(bl: Blocks, cMin: number, cMax: number, step: number): { cycles: number; explained: number } {
	const n = bl.n;
	let mean = 0;
	let sw = 0;
	for (let k = 0; k < n; k++) {
		mean += bl.w[k] * bl.y[k];
		sw += bl.w[k];
	}
	mean /= sw;
	const y = new Float64Array(n);
	let sst = 0;
	for (let k = 0; k < n; k++) {
		y[k] = bl.y[k] - mean;
		sst += y[k] * y[k];
	}
	if (!(sst > 0)) return { cycles: cMin, explained: 0 };
	const count = Math.max(1, Math.floor((cMax - cMin) / step) + 1);
	const score = new Float64Array(count);
	for (let q = 0; q < count; q++) {
		const omega = (TWO_PI * (cMin + q * step)) / n;
		const cw = Math.cos(omega);
		const sw1 = Math.sin(omega);
		let c = 1;
		let s = 0;
		let scc = 0;
		let scs = 0;
		let sc1 = 0;
		let sss = 0;
		let ss1 = 0;
		let ryc = 0;
		let rys = 0;
		for (let k = 0; k < n; k++) {
			const yk = y[k];
			scc += c * c;
			scs += c * s;
			sc1 += c;
			sss += s * s;
			ss1 += s;
			ryc += yk * c;
			rys += yk * s;
			const c2 = c * cw - s * sw1;
			s = s * cw + c * sw1;
			c = c2;
		}
		const p = solve3([scc, scs, sc1, sss, ss1, n], [ryc, rys, 0]);
		score[q] = p ? (p[0] * ryc + p[1] * rys) / sst : 0;
	}
	let best = 0;
	for (let q = 1; q < count; q++) if (score[q] > score[best]) best = q;
	let cycles = cMin + best * step;
	if (best > 0 && best < count - 1) {
		const l = score[best - 1];
		const m = score[best];
		const r = score[best + 1];
		const den = l - 2 * m + r;
		if (den < 0) cycles += (step * 0.5 * (l - r)) / den;
	}
	return { cycles, explained: score[best] };
}

/** Golden-section search of the sine fit's residual over ω in [lo, hi]. */
function refineOmega(bl: Blocks, x0: number, lo: number, hi: number, sst: number): SineFit {
	const g = (Math.sqrt(5) - 1) / 2;
	let a = lo;
	let b = hi;
	let c = b - g * (b - a);
	let d = a + g * (b - a);
	let fc = fitAt(bl, x0, c, sst);
	let fd = fitAt(bl, x0, d, sst);
	for (let it = 0; it < 60 && b - a > 1e-10 * Math.abs(b); it++) {
		if (fc.sse < fd.sse) {
			b = d;
			d = c;
			fd = fc;
			c = b - g * (b - a);
			fc = fitAt(bl, x0, c, sst);
		} else {
			a = c;
			c = d;
			fc = fd;
			d = a + g * (b - a);
			fd = fitAt(bl, x0, d, sst);
		}
	}
	return fc.sse < fd.sse ? fc : fd;
}

function fmtHz(f: number): string {
	return `${Number(f.toPrecision(4))} Hz`;
}

function pct(x: number): string {
	return `${Number((x * 100).toPrecision(2))} %`;
}

interface PhaseModel {
	/** θ(x) = omega·(x − x0) + phase, unwrapped. */
	omega: number;
	x0: number;
	phase: number;
	amp: number;
	offset: number;
	explained: number;
}

/** Finds the source's phase model from e = v + i·Rs (see the module comment, step 2). */
function findPhase(
	e: Float64Array,
	x: ArrayLike<number> | null,
	samples: Samples,
	conditions: TestConditions,
	warnings: string[]
): PhaseModel {
	const n = e.length;
	const bl = blockMeans(x, e);
	const sst = totalSquares(bl);
	let wsum = 0;
	for (let k = 0; k < bl.n; k++) wsum += bl.w[k];
	// A sine of amplitude A has an RMS of A/√2: under 1 % of Vs there is no source to follow.
	if (!(Math.sqrt((2 * sst) / wsum) > 0.01 * conditions.sourcePeakV)) {
		throw new SignatureError(
			'no_period',
			'The source signal reconstructed from V + I·Rs is (nearly) constant, under 1 % of the Vs entered, so no period can be found. Check Vs, Rs, the units and that both channels hold the signal.'
		);
	}
	const x0 = x ? (x[0] + x[n - 1]) / 2 : (n - 1) / 2;
	// Cycles per record in block units: block b sits at (about) sample (b + ½)·n/D.
	const perBlock = bl.n > 1 ? (bl.x[bl.n - 1] - bl.x[0]) / (bl.n - 1) : 1;
	const recordSpan = bl.n * perBlock;
	const cMax = Math.max(2, Math.min(bl.n / 8, 64));
	let scan = scanCycles(bl, 0.8, cMax, 0.2);
	if (scan.explained < 0.8 && bl.n / 8 > 64) {
		// Many short periods: look further up.
		const more = scanCycles(bl, 63, Math.min(bl.n / 8, 256), 0.2);
		if (more.explained > scan.explained) scan = more;
	}
	const toOmega = (cycles: number) => (TWO_PI * cycles) / recordSpan;
	const fromScan = (sig: { cycles: number }) =>
		refineOmega(bl, x0, toOmega(sig.cycles - 0.25), toOmega(sig.cycles + 0.25), sst);
	let fit = fromScan(scan);
	if (1 - fit.sse / sst < 0.5) {
		// e is not sine-like: a wrong Rs. Take the period from whichever channel repeats most clearly.
		for (const ch of [samples.v, samples.i]) {
			const alt = scanCycles(blockMeans(x, ch), 0.8, cMax, 0.2);
			if (alt.explained > scan.explained) {
				const f2 = fromScan(alt);
				if (f2.sse < fit.sse || alt.explained > 0.8) fit = f2;
			}
		}
	}
	if (x) {
		// With a time column the data's own period should be near the entered f. If it is within
		// 10 %, follow the data (a source a little off nominal); otherwise try f itself, and keep
		// the data's own period only when f fits clearly worse (a time column in the wrong unit).
		const f = conditions.frequencyHz;
		const fHz = fit.omega / TWO_PI;
		if (Math.abs(fHz / f - 1) <= 0.1) {
			if (Math.abs(fHz / f - 1) > 0.02) {
				warnings.push(
					`The capture repeats at ${fmtHz(fHz)}, not the ${fmtHz(f)} entered; the measured period was used.`
				);
			}
		} else {
			const cyc = f * recordSpan;
			const atF =
				cyc >= 0.8 && cyc <= bl.n / 3
					? refineOmega(bl, x0, toOmega(Math.max(cyc / 2, cyc - 0.4)), toOmega(cyc + 0.4), sst)
					: null;
			if (atF && atF.sse <= fit.sse * 1.05 + 1e-12 * sst) fit = atF;
			else {
				warnings.push(
					`The time column implies ${fmtHz(fHz)} rather than the ${fmtHz(f)} entered (check the time unit); the data's own period was used.`
				);
			}
		}
	}
	const explained = 1 - fit.sse / sst;
	if (explained < 0.3) {
		// A real tester source explains nearly all of e even under bench noise; noise alone does not.
		throw new SignatureError(
			'no_period',
			`No repeating source signal was found in V + I·Rs (the best sine explains ${Math.round(explained * 100)} % of it). Check the probes are connected, the channels and the Rs entered.`
		);
	}
	return { omega: fit.omega, x0, phase: fit.phase, amp: fit.amp, offset: fit.offset, explained };
}

/**
 * Turns raw samples into the canonical curve (see the module comment). Throws SignatureError
 * `bad_conditions`, `too_few_samples` or `no_period` (less than one period, or no periodicity).
 */
export function canonicalise(
	samples: Samples,
	conditions: TestConditions,
	options: { points?: number } = {}
): CanonicalCurve {
	const checked = testConditions.safeParse(conditions);
	if (!checked.success) {
		throw new SignatureError(
			'bad_conditions',
			checked.error.issues.map((issue) => issue.message).join(' ')
		);
	}
	const c = checked.data;
	const N = Math.max(8, Math.floor(options.points ?? CANONICAL_POINTS));
	const { v } = samples;
	const n = v.length;
	if (n < MIN_SAMPLES || samples.i.length !== n) {
		throw new SignatureError(
			'too_few_samples',
			`The capture has ${Math.min(n, samples.i.length)} usable samples; at least ${MIN_SAMPLES} are needed.`
		);
	}
	const t = samples.t && samples.t.length === n ? samples.t : null;
	const vs = c.sourcePeakV;
	const rs = c.sourceResistanceOhm;
	const isc = vs / rs;
	const warnings: string[] = [];

	const xAt = t ? (k: number) => t[k] : (k: number) => k;
	let i = samples.i;
	const e = new Float64Array(n);
	for (let k = 0; k < n; k++) e[k] = v[k] + i[k] * rs;
	// The period is found before the current's sign is checked (both signs share it); the first
	// search's warnings stand only if the current is kept as recorded.
	const first: string[] = [];
	let model: PhaseModel | null = null;
	let refusal: SignatureError | null = null;
	try {
		model = findPhase(e, t, samples, c, first);
	} catch (err) {
		if (!(err instanceof SignatureError && err.code === 'no_period')) throw err;
		refusal = err;
	}
	// A reversed current shows first as a part giving out power over the record (checked loosely
	// here, strictly on whole periods below). Its period is then looked for in V + I·Rs and in
	// V − I·Rs: a reversed junction's V + I·Rs repeats twice a period, or not at all.
	let reversed = false;
	if (meanPower(v, i) < -0.002 * vs * (vs / rs)) {
		const found = model ? model.omega : null;
		reversed = found !== null && currentLooksInverted(v, i, vs, rs, xAt, found);
		if (!reversed) {
			const other = reversedPeriod(v, i, rs, t, samples, c);
			reversed = other !== null && currentLooksInverted(v, i, vs, rs, xAt, other);
		}
	}
	if (reversed) {
		i = Array.from(i, (x) => -x);
		warnings.push(
			'The current read the wrong way round: V − I·Rs follows the source and V + I·Rs does not, and the part would be giving out power. It was inverted; check the polarity of the sense resistor or current probe.'
		);
		for (let k = 0; k < n; k++) e[k] = v[k] + i[k] * rs;
		model = findPhase(e, t, { ...samples, i }, c, warnings);
	} else if (model) {
		warnings.push(...first);
	} else {
		throw refusal;
	}
	const { omega, x0, phase } = model;
	const theta0 = omega * (xAt(0) - x0) + phase;
	const theta1 = omega * (xAt(n - 1) - x0) + phase;
	// n samples stand for n sample intervals of the record.
	const cycles = ((theta1 - theta0) / TWO_PI) * (n / (n - 1));
	if (!(cycles >= 0.95)) {
		throw new SignatureError(
			'no_period',
			`The capture spans ${cycles > 0 ? cycles.toFixed(2) : 'less than one'} period${cycles > 0 && cycles < 1 ? '' : 's'} of the source; at least one full period is needed (1.5 or more is better). Capture a longer record.`
		);
	}

	// Step 3: bin every sample at its nearest grid point.
	const cnt = new Float64Array(N);
	const sd = new Float64Array(N);
	const sv = new Float64Array(N);
	const si = new Float64Array(N);
	// Step 4 bookkeeping: whole periods on a coarse grid.
	// Period p spans source phases θ0 + 2πp … θ0 + 2π(p + 1) from the first sample; the record
	// ends one sample interval after its last sample (as `cycles` counts it).
	const whole = Math.floor(cycles + 1e-9);
	const spp = n / cycles;
	let coarse = 4;
	while (coarse < 64 && spp / (coarse * 2) >= 4) coarse *= 2;
	const coarseDiv = N / coarse;
	const track = whole >= 2;
	const pc = track ? new Float64Array(whole * coarse) : null;
	const pv = track ? new Float64Array(whole * coarse) : null;
	const pi = track ? new Float64Array(whole * coarse) : null;
	for (let k = 0; k < n; k++) {
		const th = omega * (xAt(k) - x0) + phase;
		const turns = th / TWO_PI;
		const cyc = Math.floor(turns);
		const u = (turns - cyc) * N;
		let j = Math.round(u);
		const delta = u - j;
		if (j >= N) j -= N;
		cnt[j]++;
		sd[j] += delta;
		sv[j] += v[k];
		si[j] += i[k];
		if (track) {
			const p = Math.floor((th - theta0) / TWO_PI);
			if (p >= 0 && p < whole) {
				const b = Math.min(coarse - 1, Math.floor(u / coarseDiv));
				const q = p * coarse + b;
				pc![q]++;
				pv![q] += v[k];
				pi![q] += i[k];
			}
		}
	}
	// Periodic linear interpolation of the bin means onto the grid.
	const pos: number[] = [];
	const mv: number[] = [];
	const mi: number[] = [];
	for (let j = 0; j < N; j++) {
		if (cnt[j] === 0) continue;
		pos.push(j + sd[j] / cnt[j]);
		mv.push(sv[j] / cnt[j]);
		mi.push(si[j] / cnt[j]);
	}
	const m = pos.length;
	const gv = new Float64Array(N);
	const gi = new Float64Array(N);
	let maxGap = 0;
	for (let q = 0; q < m; q++) {
		const next = q + 1 < m ? pos[q + 1] : pos[0] + N;
		maxGap = Math.max(maxGap, next - pos[q]);
	}
	let q = 0; // index of the last point at or before the grid point, modulo m
	for (let j = 0; j < N; j++) {
		while (q < m && pos[q] <= j) q++;
		// Points before and after j, wrapping around the period.
		const ia = q === 0 ? m - 1 : q - 1;
		const ib = q === m ? 0 : q;
		let pa = pos[ia];
		let pb = pos[ib];
		if (q === 0) pa -= N;
		if (q === m) pb += N;
		const span = pb - pa;
		const f = span > 0 ? (j - pa) / span : 0;
		gv[j] = mv[ia] + (mv[ib] - mv[ia]) * f;
		gi[j] = mi[ia] + (mi[ib] - mi[ia]) * f;
	}

	// Period spread.
	let periodSpread: number | null = null;
	if (track) {
		let acc = 0;
		let terms = 0;
		for (let b = 0; b < coarse; b++) {
			let mvb = 0;
			let mib = 0;
			let used = 0;
			for (let p = 0; p < whole; p++) {
				const qq = p * coarse + b;
				if (pc![qq] === 0) continue;
				mvb += pv![qq] / pc![qq];
				mib += pi![qq] / pc![qq];
				used++;
			}
			if (used < 2) continue;
			mvb /= used;
			mib /= used;
			for (let p = 0; p < whole; p++) {
				const qq = p * coarse + b;
				if (pc![qq] === 0) continue;
				const dv = (pv![qq] / pc![qq] - mvb) / vs;
				const di = (pi![qq] / pc![qq] - mib) / isc;
				acc += (dv * dv + di * di) / 2;
				terms++;
			}
		}
		periodSpread = terms > 0 ? Math.sqrt(acc / terms) : null;
	}

	// Step 5: checks on the source and the channels.
	const source = checkSource(e, xAt, model, vs, warnings);
	checkClipping(v, vs, 'voltage', source, warnings);
	checkClipping(i, isc, 'current', source, warnings);
	if (periodSpread !== null && periodSpread > 0.05) {
		warnings.push(
			`The periods disagree by ${pct(periodSpread)} of full scale: the part, the probes or the conditions may have changed during the capture.`
		);
	}
	if (maxGap > N / 16) {
		warnings.push(
			`The samples leave a gap of ${Math.round((maxGap / N) * 360)}° of the period uncovered; the curve there is interpolated. Capture more samples per period.`
		);
	}
	const curve = toCanonical(gv, gi, c, { periods: Math.floor(cycles + 1e-9), periodSpread, simulated: false });
	curve.warnings = warnings;
	// Noise per grid point: the samples' own noise, reduced by the samples averaged into a point.
	const sv2 = sampleNoise(v) / vs;
	const si2 = sampleNoise(i) / isc;
	curve.noise = Math.sqrt((sv2 * sv2 + si2 * si2) / 2) / Math.sqrt(Math.max(1, n / N));
	return curve;
}

function meanPower(v: ArrayLike<number>, i: ArrayLike<number>): number {
	let p = 0;
	for (let k = 0; k < v.length; k++) p += v[k] * i[k];
	return p / v.length;
}

/** The source's angular frequency found in V − I·Rs, or null when that holds no source either. */
function reversedPeriod(v: ArrayLike<number>, i: ArrayLike<number>, rs: number, t: ArrayLike<number> | null, samples: Samples, c: TestConditions): number | null {
	const e = new Float64Array(v.length);
	for (let k = 0; k < v.length; k++) e[k] = v[k] - i[k] * rs;
	try {
		return findPhase(e, t, samples, c, []).omega;
	} catch {
		return null;
	}
}

/**
 * Whether the current channel was recorded with its sign reversed (sense resistor or current probe
 * the wrong way round). The tester's source obeys e = V + I·Rs with amplitude Vs, whatever the part;
 * with the current reversed, V − I·Rs has that amplitude instead. Two checks, both required, on the
 * record's whole periods at the source frequency found (`omega`): the part as recorded gives out net
 * power (mean V·I below −1 % of Vs·Isc), which no unpowered part can; and V − I·Rs reaches Vs within
 * 10 % and clearly closer (by 2 % of Vs) than V + I·Rs, amplitudes from least-squares sine fits. The
 * power check keeps a wrong Rs entered, which can also make V − I·Rs look right, from being taken
 * for a reversed probe. A lossless part (an ideal capacitor or inductor) gives out no net power
 * either way and is left as recorded; so is a part that draws almost no current, where the sign
 * hardly shows.
 */
function currentLooksInverted(
	v: ArrayLike<number>,
	i: ArrayLike<number>,
	vs: number,
	rs: number,
	xAt: (k: number) => number,
	omega: number
): boolean {
	const n = v.length;
	const x0 = xAt(0);
	const cycles = ((omega * (xAt(n - 1) - x0)) / TWO_PI) * (n / (n - 1));
	const whole = Math.floor(cycles + 1e-9);
	if (!(whole >= 1)) return false;
	const limit = whole * TWO_PI;
	// Normal equations of e ≈ a·sin θ + b·cos θ + c, shared by both signs, and the power.
	let ss = 0, sc = 0, s1 = 0, cc = 0, c1 = 0, m = 0;
	let ps = 0, pc = 0, p1 = 0, qs = 0, qc = 0, q1 = 0;
	let power = 0;
	for (let k = 0; k < n; k++) {
		const th = omega * (xAt(k) - x0);
		if (th >= limit) break;
		const sn = Math.sin(th);
		const cs = Math.cos(th);
		const plus = v[k] + i[k] * rs;
		const minus = v[k] - i[k] * rs;
		ss += sn * sn;
		sc += sn * cs;
		s1 += sn;
		cc += cs * cs;
		c1 += cs;
		m++;
		ps += plus * sn;
		pc += plus * cs;
		p1 += plus;
		qs += minus * sn;
		qc += minus * cs;
		q1 += minus;
		power += v[k] * i[k];
	}
	if (m < MIN_SAMPLES) return false;
	const normal = [ss, sc, s1, cc, c1, m];
	const fp = solve3(normal, [ps, pc, p1]);
	const fm = solve3(normal, [qs, qc, q1]);
	if (!fp || !fm) return false;
	const missPlus = Math.abs(Math.hypot(fp[0], fp[1]) / vs - 1);
	const missMinus = Math.abs(Math.hypot(fm[0], fm[1]) / vs - 1);
	const gives = power / m < -0.01 * vs * (vs / rs);
	return gives && missMinus < 0.1 && missPlus > missMinus + 0.02;
}

/** How each sample's reconstructed source departs from the fitted sine, and its white noise. */
interface SourceFit {
	residual: Float32Array;
	noise: number;
	vs: number;
}

/**
 * Amplitude, distortion and offset of the reconstructed source (module comment, step 5). Returns
 * the per-sample residual for the clipping check.
 */
function checkSource(
	e: Float64Array,
	xAt: (k: number) => number,
	model: PhaseModel,
	vs: number,
	warnings: string[]
): SourceFit {
	// Single precision is plenty for an RMS over the flat stretch, and halves the memory of a long record.
	const residual = new Float32Array(e.length);
	const n = e.length;
	const { omega, x0, phase, amp, offset } = model;
	let sumR2 = 0;
	let sumD2 = 0;
	let prev = 0;
	// Sines by rotation between exact values every 256 samples when the spacing is even.
	const step = n > 1 ? (xAt(n - 1) - xAt(0)) / (n - 1) : 0;
	const even = uniformSpacing(xAt, n, step);
	const cw = Math.cos(omega * step);
	const sw = Math.sin(omega * step);
	let sn = 0;
	let cs = 1;
	for (let k = 0; k < n; k++) {
		if (!even || (k & 255) === 0) {
			const th = omega * (xAt(k) - x0) + phase;
			sn = Math.sin(th);
			cs = Math.cos(th);
		}
		const r = e[k] - (amp * sn + offset);
		residual[k] = r;
		sumR2 += r * r;
		if (k > 0) sumD2 += (r - prev) * (r - prev);
		prev = r;
		const s2 = sn * cw + cs * sw;
		cs = cs * cw - sn * sw;
		sn = s2;
	}
	const residualVar = sumR2 / n;
	const noiseVar = sumD2 / (2 * (n - 1));
	const distortion = Math.sqrt(Math.max(0, residualVar - noiseVar)) / vs;
	if (Math.abs(amp / vs - 1) > 0.1) {
		warnings.push(
			`The source amplitude reconstructed from V + I·Rs is ${Number(amp.toPrecision(3))} V, not the ${vs} V entered: check Vs, Rs and the units of the capture.`
		);
	}
	if (distortion > 0.03) {
		warnings.push(
			`The source reconstructed from V + I·Rs is not a clean sine (${pct(distortion)} of Vs distortion): check the Rs entered, the current units and the channels.`
		);
	}
	if (Math.abs(offset) > 0.05 * vs) {
		warnings.push(
			`The capture has a DC offset of ${Number(offset.toPrecision(3))} V in V + I·Rs: check the scope's offset and coupling.`
		);
	}
	return { residual, noise: Math.sqrt(noiseVar), vs };
}

/**
 * RMS white noise of a channel from its samples in time order: the median absolute second difference
 * (robust to knees and clipping) × 1.4826 / √6, on ≤ 4096 evenly spread triples.
 */
function sampleNoise(x: ArrayLike<number>): number {
	const n = x.length;
	if (n < 3) return 0;
	const count = Math.min(4096, n - 2);
	const stride = (n - 2) / count;
	const d = new Float64Array(count);
	for (let q = 0; q < count; q++) {
		const k = Math.floor(q * stride);
		d[q] = Math.abs(x[k] - 2 * x[k + 1] + x[k + 2]);
	}
	d.sort();
	const median = count % 2 ? d[(count - 1) / 2] : 0.5 * (d[count / 2 - 1] + d[count / 2]);
	return (1.4826 * median) / Math.sqrt(6);
}

function uniformSpacing(xAt: (k: number) => number, n: number, step: number): boolean {
	if (step <= 0) return false;
	for (let k = 1; k < n; k += Math.max(1, n >> 6)) {
		if (Math.abs(xAt(k) - xAt(k - 1) - step) > 1e-6 * step) return false;
	}
	return true;
}

/**
 * Warns when a channel sits at its extreme value for ≥ 5 % of the samples while the source
 * reconstructed there departs from the sine: a scope range that saturated. A part can hold a
 * channel flat by itself — a junction passes no current in reverse, a zener holds its voltage — and
 * then V + I·Rs still follows the source (the identity e = V + I·Rs holds for whatever the part
 * does), so a flat stretch that keeps the identity is the part, not the scope, and is not reported.
 */
function checkClipping(x: ArrayLike<number>, fullScale: number, name: string, source: SourceFit, warnings: string[]): void {
	const n = x.length;
	let lo = Infinity;
	let hi = -Infinity;
	for (let k = 0; k < n; k++) {
		if (x[k] < lo) lo = x[k];
		if (x[k] > hi) hi = x[k];
	}
	if (!(hi - lo > 0.05 * fullScale)) return;
	const tol = (hi - lo) * 1e-9;
	let atLo = 0;
	let atHi = 0;
	let loR2 = 0;
	let hiR2 = 0;
	for (let k = 0; k < n; k++) {
		const r2 = source.residual[k] ** 2;
		if (x[k] - lo <= tol) {
			atLo++;
			loR2 += r2;
		}
		if (hi - x[k] <= tol) {
			atHi++;
			hiR2 += r2;
		}
	}
	// A source departing by more than 2 % of Vs (RMS, and well above the samples' noise) on the flat stretch.
	const floor = Math.max(0.02 * source.vs, 3 * source.noise);
	const clippedLo = atLo >= 0.05 * n && Math.sqrt(loR2 / atLo) > floor;
	const clippedHi = atHi >= 0.05 * n && Math.sqrt(hiR2 / atHi) > floor;
	if (clippedLo || clippedHi) {
		const high = clippedHi && (!clippedLo || atHi >= atLo);
		warnings.push(
			`The ${name} sits at its ${high ? 'maximum' : 'minimum'} for ${pct((high ? atHi : atLo) / n)} of the samples: the capture looks clipped. Widen the scope's vertical range.`
		);
	}
}

const UNIT_NAMES: Record<string, string> = { '1V': 'V', '0.001V': 'mV', '1A': 'A', '0.001A': 'mA', '0.000001A': 'µA' };

/**
 * A file that does not state its units is read as V and A. The tester's physics tells which units
 * fit: the source e = v + i·Rs has amplitude Vs, |v| ≤ Vs and |i| ≤ Vs/Rs. When V and A miss that
 * by more than a factor of 2 and mV, mA or µA fit within 25 %, this returns the capture rescaled,
 * with a warning saying so; otherwise the capture as it was (canonicalise then warns about the
 * amplitude). Units the file or the options stated are never changed.
 */
export function inferUnits(capture: ParsedCapture, conditions: TestConditions): ParsedCapture {
	const stated = capture.unitsStated;
	if (!stated || (stated.voltage && stated.current)) return capture;
	const { v, i } = capture.samples;
	const n = v.length;
	const vs = conditions.sourcePeakV;
	const rs = conditions.sourceResistanceOhm;
	if (!(vs > 0 && rs > 0) || n < 2) return capture;
	let sv = 0;
	let si = 0;
	let svv = 0;
	let sii = 0;
	let svi = 0;
	let pv = 0;
	let pi = 0;
	for (let k = 0; k < n; k++) {
		sv += v[k];
		si += i[k];
		svv += v[k] * v[k];
		sii += i[k] * i[k];
		svi += v[k] * i[k];
		pv = Math.max(pv, Math.abs(v[k]));
		pi = Math.max(pi, Math.abs(i[k]));
	}
	const varV = svv / n - (sv / n) ** 2;
	const varI = sii / n - (si / n) ** 2;
	const cov = svi / n - (sv / n) * (si / n);
	/** |ln(amplitude of e / Vs)|, or Infinity when a channel exceeds its full scale. */
	const misfit = (a: number, b: number): number => {
		if (a * pv > 1.5 * vs || b * pi * rs > 1.5 * vs) return Infinity;
		const varE = a * a * varV + b * b * rs * rs * varI + 2 * a * b * rs * cov;
		const amp = Math.sqrt(2 * Math.max(0, varE));
		return amp > 0 ? Math.abs(Math.log(amp / vs)) : Infinity;
	};
	if (misfit(1, 1) < Math.LN2) return capture;
	let best = { a: 1, b: 1, m: misfit(1, 1) };
	for (const a of stated.voltage ? [1] : [1, 1e-3]) {
		for (const b of stated.current ? [1] : [1, 1e-3, 1e-6]) {
			const m = misfit(a, b);
			if (m < best.m) best = { a, b, m };
		}
	}
	if (best.m > Math.log(1.25) || (best.a === 1 && best.b === 1)) return capture;
	const { a, b } = best;
	const changed = [
		a !== 1 ? `the voltage as ${UNIT_NAMES[`${a}V`]}` : '',
		b !== 1 ? `the current as ${UNIT_NAMES[`${b}A`]}` : ''
	].filter(Boolean);
	const samples: Samples = { v: a === 1 ? v : v.map((x) => x * a), i: b === 1 ? i : i.map((x) => x * b) };
	if (capture.samples.t) samples.t = capture.samples.t;
	return {
		...capture,
		samples,
		unitsStated: { voltage: true, current: true },
		warnings: [
			...capture.warnings,
			`The file does not state its units, and read as volts and amperes it does not fit the conditions entered; read ${changed.join(' and ')}, which does. State the units to be sure.`
		]
	};
}
