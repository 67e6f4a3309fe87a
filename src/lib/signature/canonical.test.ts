import { describe, expect, it } from 'vitest';
import { linearCurve, type LinearPart } from '../../../tests/support/analytic';
import { gaussian, logUniform, pick, seededRandom, synthesiseSamples, writeCapture, type Rng } from '../../../tests/support/captures';
import { canonicalise, inferUnits } from './canonical';
import { parseCapture } from './parse';
import { toCanonical } from './curve';
import { SignatureError } from './errors';
import type { CanonicalCurve, Samples, TestConditions } from './types';

// Sources for the expected curves:
// - linear parts: the textbook phasor solution of a sine source behind Rs driving Z (voltage divider
//   V = E·Z/(Z + Rs)), built by tests/support/analytic.ts (Hayt & Kemmerly, "Engineering Circuit
//   Analysis", sinusoidal steady-state analysis);
// - a sharp knee: the constant-voltage-drop diode model (Sedra & Smith, "Microelectronic Circuits",
//   diode modelling chapter): the diode blocks until the source exceeds Vd, then holds Vd;
// - the noise floor: averaging m independent samples of white noise σ leaves σ/√m (the standard
//   error of the mean), so a grid point's normalised error is about √2·σ/√max(1, n/N).

function rmsDistance(a: CanonicalCurve, b: CanonicalCurve): number {
	let s = 0;
	for (let k = 0; k < a.vn.length; k++) s += (a.vn[k] - b.vn[k]) ** 2 + (a.in[k] - b.in[k]) ** 2;
	return Math.sqrt(s / a.vn.length);
}

function noiseFloor(sigma: number, samples: number, points = 256): number {
	return (Math.SQRT2 * sigma) / Math.sqrt(Math.max(1, samples / points));
}

/** Constant-voltage-drop diode (anode at probe 1), optionally with a reverse clamp (a zener's). */
function kneeCurve(c: TestConditions, vd: number, reverse: number | null, points: number): CanonicalCurve {
	const v: number[] = [];
	const i: number[] = [];
	for (let k = 0; k < points; k++) {
		const e = c.sourcePeakV * Math.sin((2 * Math.PI * k) / points);
		const vk = e > vd ? vd : reverse !== null && e < -reverse ? -reverse : e;
		v.push(vk);
		i.push((e - vk) / c.sourceResistanceOhm);
	}
	return toCanonical(v, i, c, { periods: 0, periodSpread: null, simulated: true });
}

function randomConditions(rng: Rng): TestConditions {
	return {
		sourcePeakV: logUniform(rng, 0.2, 50),
		sourceResistanceOhm: logUniform(rng, 10, 1e6),
		frequencyHz: logUniform(rng, 5, 20_000)
	};
}

function randomLinearPart(rng: Rng, c: TestConditions): LinearPart {
	const rs = c.sourceResistanceOhm;
	const w = 2 * Math.PI * c.frequencyHz;
	return pick(rng, [
		{ kind: 'resistor', ohms: rs * logUniform(rng, 0.1, 10) },
		{ kind: 'capacitor', farads: 1 / (w * rs * logUniform(rng, 0.1, 10)), leakageOhm: rs * logUniform(rng, 0.5, 20) },
		{ kind: 'inductor', henries: (rs * logUniform(rng, 0.1, 10)) / w, seriesOhm: rs * 0.1 },
		{ kind: 'open' },
		{ kind: 'short' }
	] as LinearPart[]);
}

function withoutTime(s: Samples): Samples {
	return { v: s.v, i: s.i };
}

describe('canonicalise', () => {
	it('recovers textbook linear parts from noisy random-phase captures at the noise floor', () => {
		const rng = seededRandom(11);
		const sigma = 0.02;
		for (let trial = 0; trial < 60; trial++) {
			const c = randomConditions(rng);
			const part = randomLinearPart(rng, c);
			const truth = linearCurve(part, c, 4096);
			const s = synthesiseSamples(truth, { rng, noise: sigma, samplesPerPeriod: Math.round(logUniform(rng, 50, 3000)) });
			const useTime = trial % 2 === 0;
			const curve = canonicalise(useTime ? s : withoutTime(s), c);
			const err = rmsDistance(curve, linearCurve(part, c));
			// Within 1.5× the standard error of the mean of the samples per grid point.
			expect(err, `${part.kind} trial ${trial}`).toBeLessThan(1.5 * noiseFloor(sigma, s.v.length) + 0.002);
			expect(curve.periods).toBe(Math.floor(s.periods));
			expect(curve.simulated).toBe(false);
			// The noise estimate matches the noise put in (σ per sample, σ/√m for m samples a point).
			const expected = sigma / Math.sqrt(Math.max(1, s.v.length / 256));
			expect(curve.noise!, `${part.kind} trial ${trial}`).toBeGreaterThan(0.6 * expected);
			expect(curve.noise!, `${part.kind} trial ${trial}`).toBeLessThan(1.6 * expected);
		}
	});

	it('puts point 0 at the source’s upward zero crossing (resistor: v in phase with e)', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const rng = seededRandom(3);
		const truth = linearCurve({ kind: 'resistor', ohms: 2200 }, c, 4096);
		const curve = canonicalise(withoutTime(synthesiseSamples(truth, { rng, noise: 0.002, samplesPerPeriod: 1000, periods: 3.7 })), c);
		// Voltage divider: peak v/Vs = R/(R + Rs) = 2200/3200 at θ = 90° (point 64 of 256).
		expect(curve.vn[64]).toBeCloseTo(2200 / 3200, 2);
		expect(curve.in[64]).toBeCloseTo(1000 / 3200, 2);
		expect(Math.abs(curve.vn[0])).toBeLessThan(0.01);
		expect(curve.vn[1]).toBeGreaterThan(0);
		expect(curve.vn[192]).toBeCloseTo(-2200 / 3200, 2);
	});

	it.each([
		[50, 1.3],
		[50, 20],
		[100_000, 1.3],
		[20_000, 5.5],
		[333, 9.9],
		[400, 2]
	])('finds the period from the data alone at %i samples a period × %f periods', (spp, periods) => {
		const c = { sourcePeakV: 5, sourceResistanceOhm: 470, frequencyHz: 1000 };
		const rng = seededRandom(spp + periods);
		const truth = kneeCurve(c, 0.65, null, 4096);
		const s = synthesiseSamples(truth, { rng, noise: 0.02, samplesPerPeriod: spp, periods });
		const curve = canonicalise(withoutTime(s), c);
		expect(curve.periods).toBe(Math.floor(periods));
		expect(rmsDistance(curve, kneeCurve(c, 0.65, null, 256))).toBeLessThan(1.5 * noiseFloor(0.02, s.v.length) + 0.006);
		if (periods >= 2) expect(curve.periodSpread).not.toBeNull();
		else expect(curve.periodSpread).toBeNull();
	});

	it('recovers sharp knees of diodes and zeners (constant-voltage-drop model) in random conditions', () => {
		const rng = seededRandom(5);
		for (let trial = 0; trial < 30; trial++) {
			const c = randomConditions(rng);
			const vd = Math.min(0.7, c.sourcePeakV * 0.5);
			const rev = rng() < 0.5 ? c.sourcePeakV * (0.2 + 0.6 * rng()) : null;
			const truth = kneeCurve(c, vd, rev, 4096);
			const s = synthesiseSamples(truth, { rng, noise: 0.01 });
			const curve = canonicalise(trial % 2 ? s : withoutTime(s), c);
			// Linear interpolation at a corner adds up to ~0.5 % when samples are sparse.
			expect(rmsDistance(curve, kneeCurve(c, vd, rev, 256))).toBeLessThan(1.5 * noiseFloor(0.01, s.v.length) + 0.005);
		}
	});

	it('follows a source a little off its nominal frequency when there is a time column', () => {
		const c = { sourcePeakV: 8.9, sourceResistanceOhm: 3300, frequencyHz: 60 };
		const part: LinearPart = { kind: 'capacitor', farads: 0.47e-6 };
		const rng = seededRandom(9);
		for (const error of [0.01, -0.015]) {
			const s = synthesiseSamples(linearCurve(part, c, 4096), { rng, noise: 0.01, frequencyError: error, periods: 12.4, samplesPerPeriod: 400 });
			const curve = canonicalise(s, c);
			expect(rmsDistance(curve, linearCurve(part, c))).toBeLessThan(0.01);
			expect(curve.warnings).toEqual([]);
		}
		const far = synthesiseSamples(linearCurve(part, c, 4096), { rng, noise: 0.01, frequencyError: 0.08, periods: 6.2, samplesPerPeriod: 400 });
		const curve = canonicalise(far, c);
		expect(rmsDistance(curve, linearCurve(part, c))).toBeLessThan(0.01);
		expect(curve.warnings!.join(' ')).toMatch(/repeats at 64\.\d+ Hz/);
	});

	it('uses the data’s own period when the time column is in the wrong unit', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 50 };
		const part: LinearPart = { kind: 'resistor', ohms: 1000 };
		const s = synthesiseSamples(linearCurve(part, c, 4096), { rng: seededRandom(4), noise: 0.01, periods: 4.3, samplesPerPeriod: 500 });
		const msAsSeconds = { ...s, t: s.t.map((x) => x * 1e3) };
		const curve = canonicalise(msAsSeconds, c);
		expect(rmsDistance(curve, linearCurve(part, c))).toBeLessThan(0.01);
		expect(curve.warnings!.join(' ')).toMatch(/time column/);
	});

	it('reports how well the periods agree', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 100 };
		const rng = seededRandom(8);
		const steady = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 1000 }, c, 4096), { rng, noise: 0.005, samplesPerPeriod: 800, periods: 8, startPhase: 0 });
		const a = canonicalise(withoutTime(steady), c);
		expect(a.periodSpread!).toBeLessThan(0.01);
		// The part changes half way (1 kΩ, then 3.3 kΩ): the periods disagree and the curve says so.
		const changed = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 3300 }, c, 4096), { rng, noise: 0.005, samplesPerPeriod: 800, periods: 8, startPhase: 0 });
		const half = steady.v.length >> 1;
		const mixed = {
			v: [...steady.v.slice(0, half), ...changed.v.slice(half)],
			i: [...steady.i.slice(0, half), ...changed.i.slice(half)]
		};
		const b = canonicalise(mixed, c);
		expect(b.periodSpread!).toBeGreaterThan(0.05);
		expect(b.warnings!.join(' ')).toMatch(/periods disagree/);
	});

	it('warns when the Rs entered does not match the capture', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const s = synthesiseSamples(kneeCurve(c, 0.65, 5.1, 4096), { rng: seededRandom(2), noise: 0.01, samplesPerPeriod: 500, periods: 5.5 });
		expect(canonicalise(s, c).warnings).toEqual([]);
		const wrong = canonicalise(s, { ...c, sourceResistanceOhm: 330 });
		expect(wrong.warnings!.join(' ')).toMatch(/not a clean sine|amplitude/);
	});

	it('warns when a channel is clipped', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const s = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 4700 }, c, 4096), { rng: seededRandom(6), noise: 0.005, samplesPerPeriod: 500, periods: 5.5 });
		const rail = 0.7 * Math.max(...s.v);
		const clipped = { ...s, v: s.v.map((x) => Math.max(-rail, Math.min(rail, x))) };
		expect(canonicalise(clipped, c).warnings!.join(' ')).toMatch(/clipped/);
	});

	// A junction passes no current in reverse and holds its forward drop; a zener holds its
	// breakdown voltage (facts of the trade). A quiet or coarsely quantised capture then repeats one
	// value for a long stretch, yet V + I·Rs still follows the source there: that is the part, not a
	// saturated scope range.
	it('does not call a junction or a zener clipped for holding a channel flat by itself', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		for (const reverse of [null, 5.1]) {
			for (const [noise, bits] of [
				[0, 0],
				[0, 8],
				[0.002, 8]
			]) {
				const s = synthesiseSamples(kneeCurve(c, 0.65, reverse, 4096), { rng: seededRandom(8), noise, bits, samplesPerPeriod: 500, periods: 4.5 });
				const warnings = canonicalise(s, c).warnings!.join(' ');
				expect(warnings, `reverse ${reverse}, noise ${noise}, ${bits} bits`).not.toMatch(/clipped/);
			}
		}
	});

	// The source identity e = V + I·Rs (the tester's own circuit) and passivity (an unpowered part
	// cannot give out net power) together tell a current channel recorded the wrong way round.
	it('turns a current recorded the wrong way round back, says so, and gives the same curve', () => {
		const rng = seededRandom(31);
		for (let n = 0; n < 30; n++) {
			const c = randomConditions(rng);
			const rs = c.sourceResistanceOhm;
			const w = 2 * Math.PI * c.frequencyHz;
			const curve =
				n % 3 === 0
					? linearCurve({ kind: 'resistor', ohms: rs * logUniform(rng, 0.2, 5) }, c, 4096)
					: n % 3 === 1
						? kneeCurve(c, (0.05 + 0.25 * rng()) * c.sourcePeakV, rng() < 0.5 ? null : 0.5 * c.sourcePeakV, 4096)
						: linearCurve({ kind: 'capacitor', farads: 1 / (w * rs * logUniform(rng, 0.3, 3)), leakageOhm: rs * logUniform(rng, 0.3, 3) }, c, 4096);
			const s = synthesiseSamples(curve, { rng, noise: 0.005, samplesPerPeriod: 400, periods: 3.5 });
			const upright = canonicalise(s, c);
			const reversed = canonicalise({ ...s, i: s.i.map((x) => -x) }, c);
			const label = `case ${n} at ${JSON.stringify(c)}`;
			expect(upright.warnings!.join(' '), label).not.toMatch(/wrong way round/);
			expect(reversed.warnings!.join(' '), label).toMatch(/current read the wrong way round/);
			for (let k = 0; k < upright.in.length; k += 16) expect(reversed.in[k], label).toBeCloseTo(upright.in[k], 9);
		}
	});

	it('leaves the current alone when a wrong Rs is what makes V − I·Rs look like the source', () => {
		// A 1 kΩ resistor at Rs = 1 kΩ with 3 kΩ entered: V − I·Rs(entered) = −e has amplitude Vs, but
		// the part absorbs power as recorded, so nothing is turned round (the amplitude warning stays).
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const s = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 1000 }, c, 4096), { rng: seededRandom(4), noise: 0.003, samplesPerPeriod: 400, periods: 3.5 });
		const warnings = canonicalise(s, { ...c, sourceResistanceOhm: 3000 }).warnings!.join(' ');
		expect(warnings).not.toMatch(/wrong way round/);
		expect(warnings).toMatch(/amplitude/);
	});

	it('still calls a junction clipped when the current range saturates in forward conduction', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const s = synthesiseSamples(kneeCurve(c, 0.65, null, 4096), { rng: seededRandom(8), noise: 0.002, samplesPerPeriod: 500, periods: 4.5 });
		const rail = 0.5 * Math.max(...s.i);
		const clipped = { ...s, i: s.i.map((x) => Math.min(rail, x)) };
		expect(canonicalise(clipped, c).warnings!.join(' ')).toMatch(/current sits at its maximum .* clipped/);
	});

	it('honours the number of points asked for', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const s = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 1000 }, c, 4096), { rng: seededRandom(1), noise: 0.001, samplesPerPeriod: 5000, periods: 3 });
		const curve = canonicalise(s, c, { points: 1024 });
		expect(curve.v).toHaveLength(1024);
		expect(curve.vn[256]).toBeCloseTo(0.5, 2);
	});

	it('refuses bad conditions, too short a capture and a capture with no source in it', () => {
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const s = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 1000 }, c, 4096), { rng: seededRandom(1), noise: 0.01, samplesPerPeriod: 200, periods: 3 });
		const code = (fn: () => unknown) => {
			try {
				fn();
			} catch (e) {
				expect(e).toBeInstanceOf(SignatureError);
				return (e as SignatureError).code;
			}
			return 'none';
		};
		expect(code(() => canonicalise(s, { ...c, sourcePeakV: 0 }))).toBe('bad_conditions');
		expect(code(() => canonicalise(s, { ...c, frequencyHz: 1e6 }))).toBe('bad_conditions');
		const part = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 1000 }, c, 4096), { rng: seededRandom(1), noise: 0.01, samplesPerPeriod: 200, periods: 0.6 });
		expect(code(() => canonicalise(part, c))).toBe('no_period');
		expect(code(() => canonicalise({ v: s.v.slice(0, 20), i: s.i.slice(0, 20) }, c))).toBe('too_few_samples');
		// Noise alone (probes not connected): nothing repeats.
		const rng = seededRandom(99);
		const noiseOnly = { v: s.v.map(() => gaussian(rng)), i: s.i.map(() => gaussian(rng) / 1000) };
		expect(code(() => canonicalise(noiseOnly, c))).toBe('no_period');
		// v + i·Rs constant: no source signal at all (and v − i·Rs is no source either: its amplitude
		// is half of Vs, so this is not a current recorded the wrong way round).
		const flat = { v: s.i.map((x) => 1 - 0.5 * x * 1000), i: s.i.map((x) => 0.5 * x) };
		expect(code(() => canonicalise(flat, c))).toBe('no_period');
	});

	it('infers mV, mA or µA for a file that states no units, from the physics of the tester', () => {
		// e = v + i·Rs must have amplitude Vs, with |v| ≤ Vs and |i| ≤ Vs/Rs (the tester circuit).
		const c = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
		const rng = seededRandom(12);
		for (const [part, vu, iu] of [
			[{ kind: 'resistor', ohms: 2200 }, 'V', 'mA'],
			[{ kind: 'capacitor', farads: 1e-6 }, 'mV', 'uA'],
			[{ kind: 'short' }, 'V', 'mA'],
			[{ kind: 'open' }, 'mV', 'A']
		] as [LinearPart, 'V' | 'mV', 'A' | 'mA' | 'uA'][]) {
			const s = synthesiseSamples(linearCurve(part, c, 4096), { rng, noise: 0.01, samplesPerPeriod: 300, periods: 3.3 });
			const file = writeCapture(s, {
				format: 'vi-csv', delimiter: ',', header: null, voltageUnit: vu, currentUnit: iu,
				withTime: false, currentFirst: false, crlf: false, bom: false, comments: false, decimalComma: false
			});
			// Without the units the user should have entered:
			const parsed = parseCapture(file.text);
			const fixed = inferUnits(parsed, c);
			const curve = canonicalise(fixed.samples, c);
			expect(rmsDistance(curve, linearCurve(part, c)), `${part.kind} ${vu} ${iu}`).toBeLessThan(0.02);
			const rescaled = vu !== 'V' || (iu !== 'A' && part.kind !== 'open');
			expect(fixed.warnings.some((w) => /does not state its units/.test(w))).toBe(rescaled);
			// With the units entered nothing is guessed.
			const told = parseCapture(file.text, file.parseOptions);
			expect(inferUnits(told, c)).toBe(told);
		}
		// Units in the header are never overridden, even when they misfit the conditions.
		const s = synthesiseSamples(linearCurve({ kind: 'resistor', ohms: 2200 }, c, 4096), { rng, noise: 0.01, samplesPerPeriod: 300, periods: 3.3 });
		const stated = parseCapture(['V,I (A)', ...s.v.map((v, k) => `${v},${s.i[k] * 1e3}`)].join('\n'));
		expect(inferUnits(stated, c)).toBe(stated);
	});
});
