import { describe, expect, it } from 'vitest';
import { linearCurve, logUniform, seededRandom, withNoise } from '../../../tests/support/analytic';
import type { LinearPart } from '../../../tests/support/analytic';
import {
	compare,
	conditionsComparable,
	descriptor,
	descriptorDistance,
	DESCRIPTOR_LENGTH,
	shapeDistance
} from './compare';
import { toCanonical } from './curve';
import type { CanonicalCurve, TestConditions } from './types';

const c1k: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

/** The same period seen with its phase reference off by `points` grid steps. */
function shifted(curve: CanonicalCurve, points: number): CanonicalCurve {
	const n = curve.v.length;
	const at = (x: number[], k: number) => x[(((k + points) % n) + n) % n];
	return toCanonical(
		curve.v.map((_, k) => at(curve.v, k)),
		curve.i.map((_, k) => at(curve.i, k)),
		curve.conditions,
		{ periods: 0, periodSpread: null, simulated: false }
	);
}

function unshiftedDistance(a: CanonicalCurve, b: CanonicalCurve): number {
	let s = 0;
	for (let k = 0; k < a.vn.length; k++) s += (a.vn[k] - b.vn[k]) ** 2 + (a.in[k] - b.in[k]) ** 2;
	return Math.sqrt(s / (2 * a.vn.length));
}

describe('shapeDistance and compare', () => {
	it('gives 0 and similarity 100 for identical curves', () => {
		const a = linearCurve({ kind: 'resistor', ohms: 2200 }, c1k);
		expect(shapeDistance(a, a)).toBe(0);
		expect(compare(a, a)).toEqual({ distance: 0, similarity: 100, comparable: true });
	});

	// Voltage divider (Ohm's law): vn = h·sin θ with h = R/(R + Rs), in = (1 − h)·sin θ, so the RMS
	// per axis of the difference is |h1 − h2|/√2 exactly.
	it('matches the divider-ratio difference for two resistors (2.2 kΩ and 2.7 kΩ at 1 kΩ)', () => {
		const a = linearCurve({ kind: 'resistor', ohms: 2200 }, c1k);
		const b = linearCurve({ kind: 'resistor', ohms: 2700 }, c1k);
		const expected = Math.abs(2200 / 3200 - 2700 / 3700) / Math.SQRT2;
		expect(shapeDistance(a, b)).toBeCloseTo(expected, 6);
	});

	it('tells 2.2 kΩ from 2.7 kΩ and 0.47 µF from 1 µF at the same conditions despite bench noise', () => {
		const rand = seededRandom(11);
		const pairs: [LinearPart, LinearPart][] = [
			[
				{ kind: 'resistor', ohms: 2200 },
				{ kind: 'resistor', ohms: 2700 }
			],
			[
				{ kind: 'capacitor', farads: 0.47e-6 },
				{ kind: 'capacitor', farads: 1e-6 }
			]
		];
		for (const [pa, pb] of pairs) {
			const a = linearCurve(pa, c1k);
			const b = linearCurve(pb, c1k);
			for (let k = 0; k < 10; k++) {
				const noisyA = withNoise(a, 0.01, rand);
				const noisyA2 = withNoise(a, 0.01, rand);
				const sameNoise = shapeDistance(noisyA, noisyA2);
				const other = shapeDistance(noisyA, withNoise(b, 0.01, rand));
				expect(other).toBeGreaterThan(1.5 * sameNoise);
				expect(compare(noisyA, noisyA2).similarity).toBeGreaterThan(compare(noisyA, b).similarity);
			}
		}
	});

	it('ignores a small phase-reference error and a different number of points', () => {
		const a = linearCurve({ kind: 'capacitor', farads: 1e-6 }, c1k);
		expect(shapeDistance(a, shifted(a, 3))).toBeLessThan(1e-3);
		expect(shapeDistance(a, shifted(a, -2))).toBeLessThan(1e-3);
		const fine = linearCurve({ kind: 'capacitor', farads: 1e-6 }, c1k, 1024);
		expect(shapeDistance(a, fine)).toBeLessThan(1e-3);
	});

	// Textbook: an open is V = ±Vs with no current, a short I = ±Vs/Rs with no voltage; as far apart
	// as two curves get.
	it('scores a clearly different class low', () => {
		const open = linearCurve({ kind: 'open' }, c1k);
		const short = linearCurve({ kind: 'short' }, c1k);
		expect(compare(open, short).similarity).toBeLessThan(5);
		const r = linearCurve({ kind: 'resistor', ohms: 1000 }, c1k);
		const cap = linearCurve({ kind: 'capacitor', farads: 1 / (2 * Math.PI * 60 * 1000) }, c1k);
		expect(compare(r, cap).similarity).toBeLessThan(40);
	});

	it('still compares curves under non-comparable conditions, and marks them', () => {
		const a = linearCurve({ kind: 'resistor', ohms: 2200 }, c1k);
		const b = linearCurve({ kind: 'resistor', ohms: 2200 }, { ...c1k, frequencyHz: 50 });
		const result = compare(a, b);
		expect(result.comparable).toBe(false);
		expect(result.distance).toBeLessThan(1e-9); // a resistor does not care about frequency
	});
});

describe('conditionsComparable', () => {
	it('accepts a few percent of drift and refuses 50 Hz against 60 Hz or another Rs', () => {
		expect(conditionsComparable(c1k, { sourcePeakV: 10.3, sourceResistanceOhm: 1020, frequencyHz: 61 })).toBe(
			true
		);
		expect(conditionsComparable(c1k, { ...c1k, frequencyHz: 50 })).toBe(false);
		expect(conditionsComparable(c1k, { ...c1k, sourceResistanceOhm: 1200 })).toBe(false);
		expect(conditionsComparable(c1k, { ...c1k, sourcePeakV: 5 })).toBe(false);
	});
});

describe('descriptor', () => {
	it(`has ${DESCRIPTOR_LENGTH} ≤ 64 numbers`, () => {
		expect(DESCRIPTOR_LENGTH).toBeLessThanOrEqual(64);
		expect(descriptor(linearCurve({ kind: 'open' }, c1k))).toHaveLength(DESCRIPTOR_LENGTH);
	});

	// Parseval's theorem: a truncated Fourier series never has more energy than the signal, so the
	// descriptor distance never exceeds the zero-shift point distance, and for curves made of low
	// harmonics (every linear part is one harmonic) the two agree.
	it('equals the exact distance for linear parts and never exceeds the unshifted distance', () => {
		const a = linearCurve({ kind: 'resistor', ohms: 2200 }, c1k);
		const b = linearCurve({ kind: 'capacitor', farads: 1e-6 }, c1k);
		const dd = descriptorDistance(descriptor(a), descriptor(b));
		expect(dd).toBeCloseTo(unshiftedDistance(a, b), 5);
		// The shift search can only bring curves closer.
		expect(shapeDistance(a, b)).toBeLessThanOrEqual(dd + 1e-6);
		const rand = seededRandom(5);
		const na = withNoise(a, 0.02, rand);
		const nb = withNoise(b, 0.02, rand);
		expect(descriptorDistance(descriptor(na), descriptor(nb))).toBeLessThanOrEqual(
			unshiftedDistance(na, nb) + 1e-6
		);
	});

	it('ranks like the exact distance: recall@10 ≥ 0.99 after re-ranking the 50 nearest descriptors', () => {
		const rand = seededRandom(2024);
		const library: CanonicalCurve[] = [];
		for (let k = 0; k < 300; k++) {
			const kind = k % 3;
			const part: LinearPart =
				kind === 0
					? { kind: 'resistor', ohms: logUniform(rand, 10, 100e3) }
					: kind === 1
						? { kind: 'capacitor', farads: logUniform(rand, 100e-9, 100e-6) }
						: { kind: 'inductor', henries: logUniform(rand, 0.1, 10), seriesOhm: logUniform(rand, 1, 500) };
			library.push(withNoise(linearCurve(part, c1k), 0.005, rand));
		}
		const libDesc = library.map(descriptor);
		let found = 0;
		let total = 0;
		for (let q = 0; q < 30; q++) {
			const query = withNoise(library[q * 7], 0.01, rand);
			const exact = library
				.map((c, idx) => ({ idx, d: shapeDistance(query, c) }))
				.sort((a, b) => a.d - b.d)
				.slice(0, 10)
				.map((x) => x.idx);
			const qd = descriptor(query);
			const shortlist = libDesc
				.map((d, idx) => ({ idx, d: descriptorDistance(qd, d) }))
				.sort((a, b) => a.d - b.d)
				.slice(0, 50)
				.map((x) => ({ idx: x.idx, d: shapeDistance(query, library[x.idx]) }))
				.sort((a, b) => a.d - b.d)
				.slice(0, 10)
				.map((x) => x.idx);
			for (const idx of exact) if (shortlist.includes(idx)) found++;
			total += exact.length;
		}
		expect(found / total).toBeGreaterThanOrEqual(0.99);
	});
});
