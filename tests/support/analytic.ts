/**
 * Closed-form curves of linear parts on the canonical grid, for tests.
 *
 * Textbook phasor solution of the tester circuit (a sine source E = Vs behind Rs driving an
 * impedance Z): the voltage divider V = E·Z/(Z + Rs) and I = E/(Z + Rs), with Z = R, 1/(jωC),
 * jωL, R‖C = R/(1 + jωRC) and R + jωL (any circuits textbook, e.g. Hayt & Kemmerly, "Engineering
 * Circuit Analysis", the chapter on sinusoidal steady-state analysis). Point k sits at source phase
 * θk = 2πk/N with e = Vs·sin θk, as the canonical form defines.
 */
import { toCanonical } from '../../src/lib/signature/curve';
import type { CanonicalCurve, TestConditions } from '../../src/lib/signature/types';
import { CANONICAL_POINTS } from '../../src/lib/signature/types';

export interface Impedance {
	re: number;
	im: number;
}

export type LinearPart =
	| { kind: 'open' }
	| { kind: 'short' }
	| { kind: 'resistor'; ohms: number }
	| { kind: 'capacitor'; farads: number; leakageOhm?: number }
	| { kind: 'inductor'; henries: number; seriesOhm?: number }
	| { kind: 'series-rc'; ohms: number; farads: number };

/** The part's impedance at angular frequency ω (Ω); `Infinity` for an open. */
export function impedanceOf(part: LinearPart, omega: number): Impedance {
	switch (part.kind) {
		case 'open':
			return { re: Infinity, im: 0 };
		case 'short':
			return { re: 0, im: 0 };
		case 'resistor':
			return { re: part.ohms, im: 0 };
		case 'capacitor': {
			// Y = G + jωC, Z = 1/Y.
			const g = part.leakageOhm ? 1 / part.leakageOhm : 0;
			const b = omega * part.farads;
			const d = g * g + b * b;
			return { re: g / d, im: -b / d };
		}
		case 'inductor':
			return { re: part.seriesOhm ?? 0, im: omega * part.henries };
		case 'series-rc':
			return { re: part.ohms, im: -1 / (omega * part.farads) };
	}
}

/** Canonical curve of a linear part at the given conditions (exact, noise-free). */
export function linearCurve(
	part: LinearPart,
	conditions: TestConditions,
	points: number = CANONICAL_POINTS
): CanonicalCurve {
	const { sourcePeakV: vs, sourceResistanceOhm: rs, frequencyHz: f } = conditions;
	const z = impedanceOf(part, 2 * Math.PI * f);
	// Divider ratio H = Z/(Z + Rs); for an open H = 1.
	let h: Impedance;
	if (!Number.isFinite(z.re)) h = { re: 1, im: 0 };
	else {
		const dr = z.re + rs;
		const di = z.im;
		const d = dr * dr + di * di;
		h = { re: (z.re * dr + z.im * di) / d, im: (z.im * dr - z.re * di) / d };
	}
	// e = Vs·sinθ = Re(−j·Vs·e^{jθ}); v = Re(H·(−j)·Vs·e^{jθ}) = Vs·(Re H·sinθ + Im H·cosθ).
	const v: number[] = [];
	const i: number[] = [];
	for (let k = 0; k < points; k++) {
		const th = (2 * Math.PI * k) / points;
		const e = vs * Math.sin(th);
		const vk = vs * (h.re * Math.sin(th) + h.im * Math.cos(th));
		v.push(vk);
		i.push((e - vk) / rs);
	}
	return toCanonical(v, i, conditions, { periods: 0, periodSpread: null, simulated: true });
}

/** Deterministic pseudo-random numbers (mulberry32), shared with the capture synthesiser. */
export { seededRandom } from './captures';

/** Standard normal deviate (Box–Muller) from a uniform source. */
export function gaussian(rand: () => number): number {
	const u = Math.max(rand(), 1e-12);
	return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rand());
}

/** Log-uniform value in [lo, hi]. */
export function logUniform(rand: () => number, lo: number, hi: number): number {
	return lo * Math.pow(hi / lo, rand());
}

/**
 * A curve with white noise of `sigma` (fraction of full scale) added to each axis independently, as a
 * stand-in for a canonicalised bench capture in unit tests of the analysis alone.
 */
export function withNoise(curve: CanonicalCurve, sigma: number, rand: () => number): CanonicalCurve {
	const vs = curve.conditions.sourcePeakV;
	const isc = vs / curve.conditions.sourceResistanceOhm;
	const v = curve.v.map((x) => x + sigma * vs * gaussian(rand));
	const i = curve.i.map((x) => x + sigma * isc * gaussian(rand));
	return toCanonical(v, i, curve.conditions, {
		periods: curve.periods,
		periodSpread: curve.periodSpread,
		simulated: false
	});
}
