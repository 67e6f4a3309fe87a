/**
 * Analysis of a canonical curve: which kind of part it looks like, the parameters of that part, and
 * how much of the curve the fitted part fails to explain.
 *
 * Everything works in the normalised plane (vn = V/Vs, in = I/(Vs/Rs)) on the canonical grid, which
 * is uniform in source phase θ with e = vn + in = sin θ. Methods, each named where it is used:
 * - the fundamental's phasor by a single DFT bin (the grid is uniform in θ, so bin 1 is exact for a
 *   linear part): the normalised impedance is z = V1/I1, from which R‖C and R+L follow directly;
 * - linear least squares for a resistor (one real divider ratio) and for junction branches;
 * - a Shockley fit of each conducting branch, v = a + b·ln i + c·i (Shockley's diode equation with a
 *   series resistance, linear in a, b, c, so ordinary least squares);
 * - direct least-squares ellipse fitting (Fitzgibbon, Pilu & Fisher 1999, in the numerically stable
 *   form of Halíř & Flusser 1998) as a shape check of reactive curves;
 * - model selection between the candidates by residual with a complexity penalty.
 */
import { formatSI } from './format';
import type { Analysis, CanonicalCurve, Parameter, ParameterName, SignatureClass } from './types';

/**
 * The knee (forward voltage) and the breakdown are defined as the voltage at which the current
 * through the part reaches this fraction of the full-scale current Vs/Rs.
 */
export const KNEE_CURRENT_FRACTION = 0.1;

/**
 * A part that keeps the current (or the voltage) under this fraction of full scale reads as an open
 * (or a short): below it the tester cannot tell the difference at the resolution of a bench.
 */
export const OPEN_SHORT_LEVEL = 0.005;

/**
 * A curve that no candidate explains better than this RMS fraction of full scale (or three times the
 * curve's own noise, whichever is larger) is called `complex`.
 */
export const COMPLEX_RESIDUAL = 0.02;

/**
 * Thermal voltage kT/q at 300 K: k = 1.380649e-23 J/K and q = 1.602176634e-19 C (exact in the 2019
 * SI).
 */
const THERMAL_VOLTAGE_V = (1.380649e-23 * 300) / 1.602176634e-19;
/**
 * Emission coefficients a junction curve may show: ≈ 1 for an ideal silicon junction, up to ≈ 2
 * for recombination-dominated ones, more for LEDs and junctions in series (from memory, no source).
 */
const EMISSION_RANGE = [0.8, 4] as const;
/** Harmonics counted when judging open and short (a knee spreads its signal over several). */
const LOW_PASS_HARMONICS = 12;
/** Differences in residual under this fraction of full scale mean nothing to a technician. */
const RESIDUAL_FLOOR = 0.001;
/** Each extra fitted parameter must buy this much relative residual to be chosen. */
const PARAMETER_PENALTY = 0.15;
/** A linear part's phase must exceed this (and 5 σ of its estimate) to count as reactive. */
const MIN_REACTIVE_PHASE_RAD = (2 * Math.PI) / 180;

interface Complex {
	re: number;
	im: number;
}

interface Candidate {
	cls: SignatureClass;
	residual: number;
	complexity: number;
	parameters: Partial<Record<ParameterName, Parameter>>;
	summary: string;
	warnings: string[];
}

/** One conducting branch fitted as p·v = a + b·ln y + c·y, y the branch current (normalised, > 0). */
interface Branch {
	a: number;
	b: number;
	c: number;
	/** Covariance of (a, b, c) from the least-squares fit. */
	cov: number[][];
	/** Largest branch current seen. */
	peak: number;
	/** ln Is = −a/b and Is itself (normalised saturation current of the Shockley term). */
	lnIs: number;
	isat: number;
}

/**
 * Classifies a canonical curve and fits the parameters of its class.
 *
 * Parameters are in SI units; `kneeV` is the forward voltage as a positive magnitude (which probe the
 * anode is on is in `polarity`), `reverseKneeV` the reverse knee as the signed voltage at probe 1,
 * `breakdownV` its magnitude. Both knees use `KNEE_CURRENT_FRACTION` of Vs/Rs.
 */
export function analyse(curve: CanonicalCurve): Analysis {
	// The mirror and half-period pairings below need an even grid of some size.
	const regular = curve.vn.length >= 64 && curve.vn.length % 4 === 0;
	const vn = regular ? curve.vn : resampleGrid(curve.vn, 256);
	const cn = regular ? curve.in : resampleGrid(curve.in, 256);
	const n = vn.length;
	const { sourcePeakV: vs, sourceResistanceOhm: rs, frequencyHz: f } = curve.conditions;
	const isc = vs / rs;
	const omega = 2 * Math.PI * f;
	const sin = new Float64Array(n);
	const cos = new Float64Array(n);
	for (let k = 0; k < n; k++) {
		sin[k] = Math.sin((2 * Math.PI * k) / n);
		cos[k] = Math.cos((2 * Math.PI * k) / n);
	}

	const sigma = Math.max(estimateNoise(vn, cn), 1e-6);
	// Noise on one component of a DFT-bin phasor. Under white noise it is σ·√(2/N); a capture with few
	// samples a period reaches the grid by interpolation, which makes its noise smooth (the
	// second-difference estimate then sees too little) and piles it onto the low harmonics. So also
	// measure it where it matters: harmonics 2…13, which a linear part leaves empty.
	// The canonical form's own per-point noise figure (from the samples' scatter), when it has one,
	// is a floor for both.
	const pointNoise = curve.noise ?? 0;
	const sigmaPhasor = Math.max(
		Math.max(sigma, pointNoise) * Math.sqrt(2 / n),
		harmonicNoise(vn, cn, sin, cos, 2, 13)
	);
	// For parts without memory, points at θ and π − θ see the same source voltage, so their
	// difference is noise whatever its spectrum.
	const sigmaStatic = Math.max(sigma, mirrorNoise(vn, cn));
	const v1 = phasor(vn, sin, cos);
	const i1 = phasor(cn, sin, cos);
	const v0 = mean(vn);
	const i0 = mean(cn);
	const warnings: string[] = [];

	// Open and short: the amplitude the curve's first harmonics carry beyond their share of the
	// noise, against a level the remaining noise cannot reach.
	const noisePower = LOW_PASS_HARMONICS * 2 * sigmaPhasor * sigmaPhasor;
	const peakI = Math.sqrt(Math.max(0, harmonicPower(cn, sin, cos, 1, LOW_PASS_HARMONICS) - noisePower));
	const peakV = Math.sqrt(Math.max(0, harmonicPower(vn, sin, cos, 1, LOW_PASS_HARMONICS) - noisePower));
	const openLevel = Math.max(OPEN_SHORT_LEVEL, 5 * sigmaPhasor);
	const shortLevel = openLevel;
	if (peakI < openLevel) {
		const zMin = 1 / openLevel;
		const residual = rmsResidual(vn, cn, (k) => [sin[k], 0]);
		return {
			class: 'open',
			confidence: clamp01(0.6 + 0.4 * (1 - peakI / openLevel)),
			parameters: {
				resistanceOhm: {
					unmeasurable: `reads as an open: under ${pct(openLevel)} of full-scale current flows, so any resistance above about ${formatSI(zMin * rs, 'Ω')} looks the same at ${formatSI(rs, 'Ω')} source resistance`
				},
				capacitanceF: {
					unmeasurable: `a capacitor under about ${formatSI(1 / (omega * zMin * rs), 'F')} reads as an open at ${formatSI(f, 'Hz')} and ${formatSI(rs, 'Ω')}`
				},
				inductanceH: {
					unmeasurable: `an inductor above about ${formatSI((zMin * rs) / omega, 'H')} reads as an open at ${formatSI(f, 'Hz')} and ${formatSI(rs, 'Ω')}`
				}
			},
			residual,
			summary: `open: under ${pct(openLevel)} of full-scale current (${formatSI(openLevel * isc, 'A')})`,
			warnings
		};
	}
	if (peakV < shortLevel) {
		const zMax = shortLevel;
		const residual = rmsResidual(vn, cn, (k) => [0, sin[k]]);
		return {
			class: 'short',
			confidence: clamp01(0.6 + 0.4 * (1 - peakV / shortLevel)),
			parameters: {
				resistanceOhm: {
					unmeasurable: `reads as a short: under ${pct(shortLevel)} of the source voltage appears across it, so any resistance below about ${formatSI(zMax * rs, 'Ω')} looks the same at ${formatSI(rs, 'Ω')} source resistance`
				},
				capacitanceF: {
					unmeasurable: `a capacitor above about ${formatSI(1 / (omega * zMax * rs), 'F')} reads as a short at ${formatSI(f, 'Hz')} and ${formatSI(rs, 'Ω')}`
				},
				inductanceH: {
					unmeasurable: `an inductor under about ${formatSI((zMax * rs) / omega, 'H')} reads as a short at ${formatSI(f, 'Hz')} and ${formatSI(rs, 'Ω')}`
				}
			},
			residual,
			summary: `short: under ${pct(shortLevel)} of the source voltage (${formatSI(shortLevel * vs, 'V')}) across it`,
			warnings
		};
	}

	const linear = linearCandidate(vn, cn, sin, cos, v0, i0, v1, i1, sigmaPhasor, { rs, omega });
	const candidates: Candidate[] = [linear];
	// Skip the junction models when they cannot win: a curve whose mirror points (θ, π − θ)
	// disagree is beyond any part without memory, since for each such pair a static model's
	// residual is at least half their difference, so its RMS is at least mirror/√2.
	const mirror = mirrorNoise(vn, cn);
	const score = (c: Candidate) =>
		Math.max(c.residual, RESIDUAL_FLOOR) * (1 + PARAMETER_PENALTY * c.complexity);
	const linearExplainsAll =
		linear.residual <= RESIDUAL_FLOOR ||
		score(linear) < Math.max(RESIDUAL_FLOOR, (0.95 * mirror) / Math.SQRT2) * (1 + 4 * PARAMETER_PENALTY);
	// Junction fits read each point projected onto the source line vn + in = sin θ: the voltage and
	// current channels' noise are independent, so the projection halves its variance, and on the
	// phase grid the line is known exactly.
	const onLine = projectOntoSource(vn, cn, sin);
	// Neighbouring grid points of a sparse capture share samples, so a least-squares fit over them
	// counts the same noise several times; the ratio of the mirror-pair noise (any spectrum) to the
	// second-difference noise (white only) says by how much, and widens the stated uncertainties.
	const correlation = Math.min(16, Math.max(1, sigmaStatic / sigma));
	for (const polarity of linearExplainsAll ? [] : ([1, -1] as const)) {
		const j = junctionCandidate(vn, cn, onLine, sin, sigmaStatic / Math.SQRT2, polarity, { vs, rs, correlation });
		if (j) candidates.push(j);
		const z = zenerCandidate(vn, cn, onLine, sin, sigmaStatic / Math.SQRT2, polarity, { vs, rs, correlation });
		if (z) candidates.push(z);
	}

	candidates.sort((a, b) => score(a) - score(b));
	const best = candidates[0];
	const complexLevel = Math.max(COMPLEX_RESIDUAL, 3 * Math.max(sigma, pointNoise));

	if (best.residual > complexLevel) {
		const ratio = best.residual / complexLevel;
		return {
			class: 'complex',
			confidence: clamp01(1 - 1 / (1 + (ratio - 1) * 3)),
			parameters: {},
			residual: best.residual,
			summary: `complex: no single part explains the curve (closest: ${best.cls}, ${pct(best.residual)} of full scale unexplained)`,
			warnings
		};
	}

	const runnerUp = candidates.find((c) => c.cls !== best.cls);
	const margin = runnerUp ? score(runnerUp) / score(best) : 10;
	const selection = 1 - 0.5 * Math.exp(-3 * (margin - 1));
	const fit = 1 / (1 + (best.residual / complexLevel) ** 4);
	return {
		class: best.cls,
		confidence: clamp01(selection * fit),
		parameters: best.parameters,
		residual: best.residual,
		summary: best.summary,
		warnings: [...warnings, ...best.warnings]
	};
}

// ---------------------------------------------------------------------------------------------
// Linear parts: resistor, R‖C, R+L

function linearCandidate(
	vn: number[],
	cn: number[],
	sin: Float64Array,
	cos: Float64Array,
	v0: number,
	i0: number,
	v1: Complex,
	i1: Complex,
	sigmaPhasor: number,
	{ rs, omega }: { rs: number; omega: number }
): Candidate {
	const warnings: string[] = [];
	if (Math.hypot(v0, i0) > 0.02) {
		warnings.push(
			`The curve is offset from the origin by ${pct(Math.hypot(v0, i0))} of full scale; check the probes' zero.`
		);
	}
	// z = V1/I1, normalised to Rs. Its phase error under noise, from z = V1/(E1 − V1) with |E1| = 1:
	// δz/|z| ≈ σp / (|V1|·|I1|).
	const z = div(v1, i1);
	const absV = Math.hypot(v1.re, v1.im);
	const absI = Math.hypot(i1.re, i1.im);
	const relErr = sigmaPhasor / (absV * absI);
	const phase = Math.atan2(z.im, z.re);
	const reactive = Math.abs(phase) > Math.max(5 * relErr, MIN_REACTIVE_PHASE_RAD);

	if (!reactive) {
		// Linear least squares for the real divider ratio h = R/(R+Rs): vn = h·sinθ, in = (1−h)·sinθ
		// (plus offsets), minimising both axes' squared error together.
		let svs = 0;
		let sis = 0;
		let ss = 0;
		for (let k = 0; k < vn.length; k++) {
			svs += (vn[k] - v0) * sin[k];
			sis += (cn[k] - i0) * sin[k];
			ss += sin[k] * sin[k];
		}
		const h = (svs - sis + ss) / (2 * ss);
		const r = h / (1 - h);
		const residual = rmsResidual(vn, cn, (k) => [v0 + h * sin[k], i0 + (1 - h) * sin[k]]);
		// δh from the two axes' noise (each σ per point; the fit averages 2N points weighted by sin²).
		const sigmaH = (sigmaPhasor * Math.sqrt(vn.length / 2)) / Math.sqrt(2 * ss);
		const dr = sigmaH / ((1 - h) * (1 - h));
		const ohms = r * rs;
		return {
			cls: 'resistive',
			residual,
			complexity: 1,
			parameters: { resistanceOhm: { value: ohms, unit: 'Ω', uncertainty: dr * rs } },
			summary: `resistor ≈ ${formatSI(ohms, 'Ω')}`,
			warnings
		};
	}

	const residual = rmsResidual(vn, cn, (k) => [
		v0 + v1.re * cos[k] - v1.im * sin[k],
		i0 + i1.re * cos[k] - i1.im * sin[k]
	]);
	const shape = ellipseCheck(vn, cn);
	if (shape && shape.offCentre > 0.02) {
		warnings.push(
			`The ellipse's centre sits ${pct(shape.offCentre)} of full scale from the origin; a passive part's curve is centred.`
		);
	}

	if (phase < 0) {
		// Phasor fit of R‖C: Y = 1/Z = G + jωC, normalised y = Rs·Y. δy ≈ σp/|V1|².
		const y = div({ re: 1, im: 0 }, z);
		const dy = sigmaPhasor / (absV * absV);
		const farads = y.im / (omega * rs);
		const parameters: Partial<Record<ParameterName, Parameter>> = {
			capacitanceF: { value: farads, unit: 'F', uncertainty: dy / (omega * rs) }
		};
		let leak = '';
		if (y.re > 3 * dy) {
			parameters.leakageOhm = { value: rs / y.re, unit: 'Ω', uncertainty: (rs * dy) / (y.re * y.re) };
			leak = ` with ${formatSI(rs / y.re, 'Ω')} leakage`;
		} else {
			parameters.leakageOhm = {
				unmeasurable: `no leakage measurable: above about ${formatSI(rs / (3 * dy), 'Ω')} at these conditions`
			};
		}
		return {
			cls: 'capacitive',
			residual,
			complexity: 2,
			parameters,
			summary: `capacitor ≈ ${formatSI(farads, 'F')}${leak}`,
			warnings
		};
	}

	// Phasor fit of R+L: Z = R + jωL, normalised. δz ≈ |z|·σp/(|V1||I1|) = σp/|I1|².
	const dz = sigmaPhasor / (absI * absI);
	const henries = (z.im * rs) / omega;
	const parameters: Partial<Record<ParameterName, Parameter>> = {
		inductanceH: { value: henries, unit: 'H', uncertainty: (dz * rs) / omega }
	};
	let series = '';
	if (z.re > 3 * dz) {
		parameters.seriesResistanceOhm = { value: z.re * rs, unit: 'Ω', uncertainty: dz * rs };
		series = ` with ${formatSI(z.re * rs, 'Ω')} series resistance`;
	} else {
		parameters.seriesResistanceOhm = {
			unmeasurable: `series resistance too small to measure: under about ${formatSI(Math.max(3 * dz, 0) * rs, 'Ω')} at these conditions`
		};
	}
	return {
		cls: 'inductive',
		residual,
		complexity: 2,
		parameters,
		summary: `inductor ≈ ${formatSI(henries, 'H')}${series}`,
		warnings
	};
}

// ---------------------------------------------------------------------------------------------
// Junctions and zeners: Shockley fits of the conducting branches

/**
 * A junction with polarity p (+1: anode at probe 1, so it conducts where v > 0): the reverse half is
 * a leakage conductance G (linear least squares through the origin), the forward half G plus a
 * Shockley branch.
 */
function junctionCandidate(
	vn: number[],
	cn: number[],
	fit: { v: number[]; i: number[] },
	sin: Float64Array,
	sigma: number,
	p: 1 | -1,
	{ vs, rs, correlation }: { vs: number; rs: number; correlation: number }
): Candidate | undefined {
	const n = vn.length;
	let svv = 0;
	let svi = 0;
	for (let k = 0; k < n; k++) {
		if (p * sin[k] < 0) {
			svv += fit.v[k] * fit.v[k];
			svi += fit.v[k] * fit.i[k];
		}
	}
	const gFit = svv > 0 ? svi / svv : 0;
	const g = Math.max(0, gFit);
	const dg = svv > 0 ? (sigma * correlation) / Math.sqrt(svv) : Infinity;
	const forward = fitBranch(fit.v, fit.i, sin, sigma, p, g, vs, correlation);
	if (!forward) return undefined;
	const residual = rmsResidual(vn, cn, (k) => modelPoint(sin[k], p, g, forward, undefined));

	const parameters: Partial<Record<ParameterName, Parameter>> = {
		polarity: { value: p === 1 ? 'anode-at-probe-1' : 'cathode-at-probe-1', unit: '' }
	};
	const knee = kneeOf(forward, vs);
	parameters.kneeV = knee;
	if (g > 3 * dg) {
		parameters.leakageOhm = { value: rs / g, unit: 'Ω', uncertainty: (rs * dg) / (g * g) };
	} else {
		parameters.leakageOhm = {
			unmeasurable: `no reverse leakage measurable: above about ${formatSI(rs / (3 * dg), 'Ω')} at these conditions`
		};
	}
	const kneeText = 'value' in knee && typeof knee.value === 'number' ? `, knee ${formatSI(knee.value, 'V')}` : '';
	const leakText =
		'value' in parameters.leakageOhm && typeof parameters.leakageOhm.value === 'number'
			? `, leakage ${formatSI(parameters.leakageOhm.value, 'Ω')}`
			: '';
	return {
		cls: 'junction',
		residual,
		complexity: 4,
		parameters,
		summary: `junction, ${p === 1 ? 'anode' : 'cathode'} at probe 1${kneeText}${leakText}`,
		warnings: []
	};
}

/**
 * A zener (or any part that conducts both ways through a knee): both halves are Shockley branches.
 * Polarity p names the forward side; the caller tries both, the better fit wins, and the forward
 * side is then the one with the smaller knee.
 */
function zenerCandidate(
	vn: number[],
	cn: number[],
	fit: { v: number[]; i: number[] },
	sin: Float64Array,
	sigma: number,
	p: 1 | -1,
	{ vs, correlation }: { vs: number; rs: number; correlation: number }
): Candidate | undefined {
	const forward = fitBranch(fit.v, fit.i, sin, sigma, p, 0, vs, correlation);
	const reverse = fitBranch(fit.v, fit.i, sin, sigma, -p as 1 | -1, 0, vs, correlation);
	if (!forward || !reverse) return undefined;
	const kf = kneeOf(forward, vs);
	const kr = kneeOf(reverse, vs);
	// Forward is the smaller knee; the other polarity's candidate covers the mirror case.
	const fv = 'value' in kf && typeof kf.value === 'number' ? kf.value : extrapolatedKnee(forward, vs);
	const rv = 'value' in kr && typeof kr.value === 'number' ? kr.value : extrapolatedKnee(reverse, vs);
	if (fv > rv) return undefined;
	const residual = rmsResidual(vn, cn, (k) => modelPoint(sin[k], p, 0, forward, reverse));
	const parameters: Partial<Record<ParameterName, Parameter>> = {
		polarity: { value: p === 1 ? 'anode-at-probe-1' : 'cathode-at-probe-1', unit: '' },
		kneeV: kf
	};
	if ('value' in kr && typeof kr.value === 'number') {
		parameters.breakdownV = kr;
		parameters.reverseKneeV = { value: -p * kr.value, unit: 'V', uncertainty: kr.uncertainty };
	} else {
		parameters.breakdownV = kr;
		parameters.reverseKneeV = kr;
	}
	const bText =
		'value' in kr && typeof kr.value === 'number' ? ` ${formatSI(kr.value, 'V')}` : ' (not measurable)';
	const kText = 'value' in kf && typeof kf.value === 'number' ? `, forward knee ${formatSI(kf.value, 'V')}` : '';
	return {
		cls: 'zener',
		residual,
		complexity: 6,
		parameters,
		summary: `zener, breakdown${bText}${kText}, anode at probe ${p === 1 ? 1 : 2}`,
		warnings: []
	};
}

/**
 * Shockley fit of one half by linear least squares: on the points of the half where the source
 * drives polarity p and the branch current y = p·(i − G·v) is clearly above the noise,
 * x = p·v = a + b·ln y + c·y, where b = n·Vt/Vs (emission coefficient n, thermal voltage Vt) and
 * c = (series resistance)/Rs. b is held to the physical range of n (EMISSION_RANGE): when the free
 * fit leaves it, b is fixed at the nearer bound and a, c refitted; a negative c (noise on a steep
 * branch) is dropped the same way.
 */
function fitBranch(
	vn: number[],
	cn: number[],
	sin: Float64Array,
	sigma: number,
	p: 1 | -1,
	g: number,
	vs: number,
	correlation: number
): Branch | undefined {
	const xs: number[] = [];
	const ys: number[] = [];
	const yMin = Math.max(0.04, 5 * sigma);
	let peak = 0;
	for (let k = 0; k < vn.length; k++) {
		if (p * sin[k] <= 0) continue;
		const x = p * vn[k];
		const y = p * (cn[k] - g * vn[k]);
		if (y > peak) peak = y;
		if (y >= yMin) {
			xs.push(x);
			ys.push(y);
		}
	}
	if (xs.length < 6) return undefined;
	const logs = ys.map(Math.log);
	const ones = xs.map(() => 1);
	const bMin = (EMISSION_RANGE[0] * THERMAL_VOLTAGE_V) / vs;
	const bMax = (EMISSION_RANGE[1] * THERMAL_VOLTAGE_V) / vs;

	const make = (a: number, b: number, c: number, cov: number[][]): Branch => {
		const lnIs = b > 1e-12 ? -a / b : 0;
		const scaled = cov.map((row) => row.map((x) => x * correlation * correlation));
		return { a, b, c, cov: scaled, peak, lnIs, isat: Math.exp(lnIs) };
	};
	const free = leastSquares([ones, logs, ys], xs);
	if (free) {
		const [a, b, c] = free.coef;
		if (b >= bMin && b <= bMax && c >= 0) return make(a, b, c, free.cov);
	}
	// b at its bound: x − b·ln y = a + c·y.
	const b = free ? Math.min(bMax, Math.max(bMin, free.coef[1])) : bMin;
	const target = xs.map((x, k) => x - b * logs[k]);
	const withC = leastSquares([ones, ys], target);
	if (withC && withC.coef[1] >= 0) {
		const cov = [
			[withC.cov[0][0], 0, withC.cov[0][1]],
			[0, 0, 0],
			[withC.cov[1][0], 0, withC.cov[1][1]]
		];
		return make(withC.coef[0], b, withC.coef[1], cov);
	}
	const only = leastSquares([ones], target);
	if (!only) return undefined;
	return make(only.coef[0], b, 0, [
		[only.cov[0][0], 0, 0],
		[0, 0, 0],
		[0, 0, 0]
	]);
}

/** Branch voltage x at branch current y ≥ 0; 0 at y = 0 (Shockley's "−1" term), never negative. */
function branchX(br: Branch, y: number): number {
	if (y <= 0) return 0;
	let x: number;
	if (br.b > 1e-9) {
		// b·ln(1 + y/Is) = b·(ln(Is + y) − ln Is) with ln Is = −a/b; Is may underflow to 0 harmlessly.
		x = br.b * (Math.log(y + br.isat) - br.lnIs);
	} else {
		x = br.a;
	}
	return Math.max(0, x) + br.c * y;
}

/**
 * The fitted model's point on the curve at source phase with sin θ = s: solves
 * s = v + i with p·v = x, p·i = G·x + y, x = branchX(y) for y by Newton steps kept in a bracket (the right side grows
 * with y, so the root is unique).
 */
function modelPoint(
	s: number,
	p: 1 | -1,
	g: number,
	forward: Branch,
	reverse: Branch | undefined
): [number, number] {
	const q = p * s;
	const br = q > 0 ? forward : reverse;
	if (!br) {
		const v = s / (1 + g);
		return [v, g * v];
	}
	const target = Math.abs(q);
	const sign = q > 0 ? p : -p;
	// Newton's method kept inside a bisection bracket [lo, hi] (f(lo) ≤ 0 ≤ f(hi)).
	let lo = 0;
	let hi = target;
	// Start from the branch current with the linear terms ignored, which is nearly exact below the
	// knee, where the steep logarithm would otherwise cost Newton dozens of bisection steps.
	let y = target * 0.5;
	if (br.b > 1e-9) {
		const guess = br.isat * Math.expm1(Math.min(700, target / ((1 + g) * br.b)));
		if (guess > 0 && guess < target) y = guess;
	}
	for (let it = 0; it < 60; it++) {
		const x = branchX(br, y);
		const fy = (1 + g) * x + y - target;
		if (fy > 0) hi = y;
		else lo = y;
		const slope = (1 + g) * ((x > br.c * y && br.b > 1e-9 ? br.b / (y + br.isat) : 0) + br.c) + 1;
		let next = y - fy / slope;
		if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
		if (Math.abs(next - y) <= 1e-13 * (target + 1e-300) || hi - lo <= 1e-13 * target) {
			y = next;
			break;
		}
		y = next;
	}
	const x = Math.min(branchX(br, y), target / (1 + g));
	return [sign * x, sign * (g * x + y)];
}

/** Knee of a branch in volts (positive) at KNEE_CURRENT_FRACTION, with its uncertainty. */
function kneeOf(br: Branch, vs: number): Parameter {
	if (br.peak < KNEE_CURRENT_FRACTION * 0.5) {
		return {
			unmeasurable: `the current never reaches ${pct(KNEE_CURRENT_FRACTION)} of full scale (Vs/Rs) on this side, so the knee is not defined at these conditions; raise Vs or lower Rs`
		};
	}
	const y = KNEE_CURRENT_FRACTION;
	const x = br.a + br.b * Math.log(y) + br.c * y;
	const grad = [1, Math.log(y), y];
	let variance = 0;
	for (let r = 0; r < 3; r++) for (let s = 0; s < 3; s++) variance += grad[r] * br.cov[r][s] * grad[s];
	return { value: x * vs, unit: 'V', uncertainty: Math.sqrt(Math.max(variance, 0)) * vs };
}

function extrapolatedKnee(br: Branch, vs: number): number {
	const y = KNEE_CURRENT_FRACTION;
	return (br.a + br.b * Math.log(y) + br.c * y) * vs;
}

// ---------------------------------------------------------------------------------------------
// Direct least-squares ellipse fit (Fitzgibbon, Pilu & Fisher 1999; Halíř & Flusser 1998)

export interface EllipseFit {
	/** Conic a·x² + b·xy + c·y² + d·x + e·y + f = 0, unit norm. */
	conic: [number, number, number, number, number, number];
	centre: [number, number];
	/** Distance of the centre from the origin, in full-scale units. */
	offCentre: number;
}

/**
 * Fits the ellipse closest (in algebraic distance, under the constraint 4ac − b² = 1) to the points.
 * Returns undefined when the points admit no ellipse (e.g. a straight line).
 */
export function fitEllipse(x: ArrayLike<number>, y: ArrayLike<number>): EllipseFit | undefined {
	const n = x.length;
	// Scatter matrices of the quadratic part D1 = [x², xy, y²] and the linear part D2 = [x, y, 1].
	const s1 = zeros(3);
	const s2 = zeros(3);
	const s3 = zeros(3);
	for (let k = 0; k < n; k++) {
		const d1 = [x[k] * x[k], x[k] * y[k], y[k] * y[k]];
		const d2 = [x[k], y[k], 1];
		for (let r = 0; r < 3; r++)
			for (let s = 0; s < 3; s++) {
				s1[r][s] += d1[r] * d1[s];
				s2[r][s] += d1[r] * d2[s];
				s3[r][s] += d2[r] * d2[s];
			}
	}
	const s3inv = invert3(s3);
	if (!s3inv) return undefined;
	// T = −S3⁻¹ S2ᵀ ; M = S1 + S2 T ; then C1⁻¹ M with C1 = [[0,0,2],[0,−1,0],[2,0,0]].
	const t = mul3(s3inv, transpose3(s2)).map((row) => row.map((v) => -v));
	const m = add3(s1, mul3(s2, t));
	const reduced = [
		[m[2][0] / 2, m[2][1] / 2, m[2][2] / 2],
		[-m[1][0], -m[1][1], -m[1][2]],
		[m[0][0] / 2, m[0][1] / 2, m[0][2] / 2]
	];
	let best: number[] | undefined;
	for (const lambda of eigenvalues3(reduced)) {
		const vec = nullVector3(reduced, lambda);
		if (!vec) continue;
		if (4 * vec[0] * vec[2] - vec[1] * vec[1] > 0) {
			best = vec;
			break;
		}
	}
	if (!best) return undefined;
	const a2 = [0, 1, 2].map((r) => t[r][0] * best![0] + t[r][1] * best![1] + t[r][2] * best![2]);
	const coef = [...best, ...a2];
	const norm = Math.hypot(...coef);
	const [a, b, c, d, e, f0] = coef.map((v) => v / norm) as EllipseFit['conic'];
	const det = 4 * a * c - b * b;
	const cx = (b * e - 2 * c * d) / det;
	const cy = (b * d - 2 * a * e) / det;
	return { conic: [a, b, c, d, e, f0], centre: [cx, cy], offCentre: Math.hypot(cx, cy) };
}

function ellipseCheck(vn: number[], cn: number[]): EllipseFit | undefined {
	try {
		return fitEllipse(vn, cn);
	} catch {
		return undefined;
	}
}

// ---------------------------------------------------------------------------------------------
// Small numerical helpers

/** Fundamental phasor by one DFT bin: x(θ) ≈ Re(X·e^{jθ}). */
function phasor(x: number[], sin: Float64Array, cos: Float64Array): Complex {
	let re = 0;
	let im = 0;
	for (let k = 0; k < x.length; k++) {
		re += x[k] * cos[k];
		im -= x[k] * sin[k];
	}
	return { re: (2 * re) / x.length, im: (2 * im) / x.length };
}

function div(a: Complex, b: Complex): Complex {
	const d = b.re * b.re + b.im * b.im;
	return { re: (a.re * b.re + a.im * b.im) / d, im: (a.im * b.re - a.re * b.im) / d };
}

function mean(x: number[]): number {
	let s = 0;
	for (const v of x) s += v;
	return s / x.length;
}

/**
 * White-noise standard deviation per point, from the median absolute second difference (robust to
 * the few points where a knee bends the curve): for white noise Var(x[k+1] − 2x[k] + x[k−1]) = 6σ²,
 * and σ = 1.4826·MAD for a normal distribution.
 */
export function estimateNoise(vn: number[], cn: number[]): number {
	const one = (x: number[]) => {
		const n = x.length;
		const d = new Float64Array(n);
		for (let k = 0; k < n; k++) d[k] = Math.abs(x[(k + 1) % n] - 2 * x[k] + x[(k + n - 1) % n]);
		d.sort();
		const median = n % 2 ? d[(n - 1) / 2] : 0.5 * (d[n / 2 - 1] + d[n / 2]);
		return (1.4826 * median) / Math.sqrt(6);
	};
	const a = one(vn);
	const b = one(cn);
	return Math.sqrt((a * a + b * b) / 2);
}

/**
 * RMS of one phasor component over harmonics lo…hi of both axes: the noise a DFT bin picks up, when
 * those harmonics hold nothing but noise.
 */
function harmonicNoise(
	vn: number[],
	cn: number[],
	sin: Float64Array,
	cos: Float64Array,
	lo: number,
	hi: number
): number {
	const n = vn.length;
	let acc = 0;
	let count = 0;
	for (const x of [vn, cn]) {
		for (let h = lo; h <= hi && h < n / 2; h++) {
			let re = 0;
			let im = 0;
			for (let k = 0; k < n; k++) {
				const idx = (h * k) % n;
				re += x[k] * cos[idx];
				im += x[k] * sin[idx];
			}
			acc += ((2 * re) / n) ** 2 + ((2 * im) / n) ** 2;
			count += 2;
		}
	}
	return count ? Math.sqrt(acc / count) : 0;
}

/** Each point moved onto the line v + i = sin θ (orthogonal projection in the normalised plane). */
function projectOntoSource(vn: number[], cn: number[], sin: Float64Array): { v: number[]; i: number[] } {
	const v = new Array<number>(vn.length);
	const i = new Array<number>(vn.length);
	for (let k = 0; k < vn.length; k++) {
		const miss = (sin[k] - vn[k] - cn[k]) / 2;
		v[k] = vn[k] + miss;
		i[k] = cn[k] + miss;
	}
	return { v, i };
}

/** Noise per point from the mirror pairs θ ↔ π − θ (same source voltage): RMS difference / √2. */
function mirrorNoise(vn: number[], cn: number[]): number {
	const n = vn.length;
	let acc = 0;
	let count = 0;
	for (let k = 1; k < n / 4; k++) {
		for (const base of [0, n / 2]) {
			const a = (base + k) % n;
			const b = (base + n / 2 - k + n) % n;
			acc += (vn[a] - vn[b]) ** 2 + (cn[a] - cn[b]) ** 2;
			count += 2;
		}
	}
	return count ? Math.sqrt(acc / (2 * count)) : 0;
}

/** RMS per axis of (measured − model) over the curve: sqrt(Σ(Δv² + Δi²) / 2N). */
function rmsResidual(vn: number[], cn: number[], model: (k: number) => [number, number]): number {
	let s = 0;
	for (let k = 0; k < vn.length; k++) {
		const [mv, mi] = model(k);
		s += (vn[k] - mv) ** 2 + (cn[k] - mi) ** 2;
	}
	return Math.sqrt(s / (2 * vn.length));
}

/** Periodic linear interpolation of a curve onto m points of the phase grid. */
function resampleGrid(x: number[], m: number): number[] {
	const n = x.length;
	return Array.from({ length: m }, (_, k) => {
		const pos = (k * n) / m;
		const j = Math.floor(pos);
		const frac = pos - j;
		return x[j % n] * (1 - frac) + x[(j + 1) % n] * frac;
	});
}

/** Σ|Xh|² over harmonics lo…hi (Xh the amplitude phasor): the squared amplitude they carry. */
function harmonicPower(x: number[], sin: Float64Array, cos: Float64Array, lo: number, hi: number): number {
	const n = x.length;
	let acc = 0;
	for (let h = lo; h <= hi && h < n / 2; h++) {
		let re = 0;
		let im = 0;
		for (let k = 0; k < n; k++) {
			const idx = (h * k) % n;
			re += x[k] * cos[idx];
			im += x[k] * sin[idx];
		}
		acc += ((2 * re) / n) ** 2 + ((2 * im) / n) ** 2;
	}
	return acc;
}


function clamp01(x: number): number {
	return Math.min(0.99, Math.max(0.01, x));
}

function pct(x: number): string {
	return `${Number((x * 100).toPrecision(2))} %`;
}

/** Ordinary least squares via the normal equations (tiny systems), with the coefficient covariance. */
function leastSquares(cols: number[][], target: number[]): { coef: number[]; cov: number[][] } | undefined {
	const m = cols.length;
	const n = target.length;
	const ata = Array.from({ length: m }, () => new Array<number>(m).fill(0));
	const atb = new Array<number>(m).fill(0);
	for (let r = 0; r < m; r++) {
		for (let s = r; s < m; s++) {
			let acc = 0;
			for (let k = 0; k < n; k++) acc += cols[r][k] * cols[s][k];
			ata[r][s] = acc;
			ata[s][r] = acc;
		}
		let acc = 0;
		for (let k = 0; k < n; k++) acc += cols[r][k] * target[k];
		atb[r] = acc;
	}
	const inv = invert(ata);
	if (!inv) return undefined;
	const coef = inv.map((row) => row.reduce((acc, v, s) => acc + v * atb[s], 0));
	let rss = 0;
	for (let k = 0; k < n; k++) {
		let fit = 0;
		for (let r = 0; r < m; r++) fit += coef[r] * cols[r][k];
		rss += (target[k] - fit) ** 2;
	}
	const s2 = n > m ? rss / (n - m) : 0;
	return { coef, cov: inv.map((row) => row.map((v) => v * s2)) };
}

/** Gauss–Jordan inverse with partial pivoting; undefined when (numerically) singular. */
function invert(a: number[][]): number[][] | undefined {
	const m = a.length;
	const w = a.map((row, r) => [...row, ...Array.from({ length: m }, (_, s) => (r === s ? 1 : 0))]);
	const scale = Math.max(...a.map((row) => Math.max(...row.map(Math.abs))), 1e-300);
	for (let col = 0; col < m; col++) {
		let piv = col;
		for (let r = col + 1; r < m; r++) if (Math.abs(w[r][col]) > Math.abs(w[piv][col])) piv = r;
		if (Math.abs(w[piv][col]) < scale * 1e-13) return undefined;
		[w[col], w[piv]] = [w[piv], w[col]];
		const d = w[col][col];
		for (let s = 0; s < 2 * m; s++) w[col][s] /= d;
		for (let r = 0; r < m; r++) {
			if (r === col) continue;
			const factor = w[r][col];
			if (factor === 0) continue;
			for (let s = 0; s < 2 * m; s++) w[r][s] -= factor * w[col][s];
		}
	}
	return w.map((row) => row.slice(m));
}

function zeros(m: number): number[][] {
	return Array.from({ length: m }, () => new Array<number>(m).fill(0));
}
function invert3(a: number[][]): number[][] | undefined {
	return invert(a);
}
function transpose3(a: number[][]): number[][] {
	return [0, 1, 2].map((r) => [0, 1, 2].map((s) => a[s][r]));
}
function mul3(a: number[][], b: number[][]): number[][] {
	return [0, 1, 2].map((r) => [0, 1, 2].map((s) => a[r][0] * b[0][s] + a[r][1] * b[1][s] + a[r][2] * b[2][s]));
}
function add3(a: number[][], b: number[][]): number[][] {
	return [0, 1, 2].map((r) => [0, 1, 2].map((s) => a[r][s] + b[r][s]));
}

/** Real eigenvalues of a 3×3 matrix from its characteristic cubic (trigonometric / Cardano roots). */
function eigenvalues3(m: number[][]): number[] {
	const tr = m[0][0] + m[1][1] + m[2][2];
	const minors =
		m[0][0] * m[1][1] -
		m[0][1] * m[1][0] +
		m[0][0] * m[2][2] -
		m[0][2] * m[2][0] +
		m[1][1] * m[2][2] -
		m[1][2] * m[2][1];
	const det =
		m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) -
		m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0]) +
		m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
	// λ³ − tr·λ² + minors·λ − det = 0 → depressed t³ + pt + q with λ = t + tr/3.
	const shift = tr / 3;
	const p = minors - (tr * tr) / 3;
	const q = (-2 * tr * tr * tr) / 27 + (tr * minors) / 3 - det;
	const disc = (q * q) / 4 + (p * p * p) / 27;
	if (disc > 0) {
		const sq = Math.sqrt(disc);
		return [Math.cbrt(-q / 2 + sq) + Math.cbrt(-q / 2 - sq) + shift];
	}
	const r = Math.sqrt(Math.max(-p / 3, 0));
	const arg = r === 0 ? 0 : Math.min(1, Math.max(-1, (-q / 2) / (r * r * r)));
	const phi = Math.acos(arg);
	return [0, 1, 2].map((j) => 2 * r * Math.cos((phi - 2 * Math.PI * j) / 3) + shift);
}

/** A unit vector v with (M − λI)v ≈ 0: the largest cross product of two rows of M − λI. */
function nullVector3(m: number[][], lambda: number): number[] | undefined {
	const a = m.map((row, r) => row.map((v, s) => (r === s ? v - lambda : v)));
	const cross = (u: number[], w: number[]) => [
		u[1] * w[2] - u[2] * w[1],
		u[2] * w[0] - u[0] * w[2],
		u[0] * w[1] - u[1] * w[0]
	];
	let best: number[] | undefined;
	let bestNorm = 0;
	for (const [r, s] of [
		[0, 1],
		[0, 2],
		[1, 2]
	]) {
		const c = cross(a[r], a[s]);
		const norm = Math.hypot(...c);
		if (norm > bestNorm) {
			bestNorm = norm;
			best = c;
		}
	}
	return best && bestNorm > 0 ? best.map((v) => v / bestNorm) : undefined;
}
