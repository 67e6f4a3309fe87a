import { seededRandom } from '../../../tests/support/captures';
import { describe, expect, it } from 'vitest';
import { SignatureError } from './errors';
import { MODEL_LIMITS, parseModel, simulate, THERMAL_VOLTAGE, type SimulationStats } from './simulate';
import type { CanonicalCurve, DeviceModel, TestConditions } from './types';

// Seeded random numbers (mulberry32) so every run draws the same parts and conditions.
const random = seededRandom;

function logUniform(rnd: () => number, lo: number, hi: number): number {
	return Math.exp(Math.log(lo) + rnd() * (Math.log(hi) - Math.log(lo)));
}

function randomConditions(rnd: () => number, limits = { rsMax: 1e6, fMin: 5 }): TestConditions {
	return {
		sourcePeakV: logUniform(rnd, 0.2, 50),
		sourceResistanceOhm: logUniform(rnd, 10, limits.rsMax),
		frequencyHz: logUniform(rnd, limits.fMin, 20e3)
	};
}
/** Conditions under which an inductor that reads as inductive stays within the model's limits. */
const forInductors = { rsMax: 20e3, fMin: 50 };

const max = (xs: number[]) => Math.max(...xs);
const min = (xs: number[]) => Math.min(...xs);
const maxAbs = (xs: number[]) => Math.max(...xs.map(Math.abs));

// --- Complex impedances, for the textbook phasor solution of linear networks ---------------------
// Z_R = R, Z_C = 1/(jωC), Z_L = jωL; series impedances add, parallel admittances add; the device
// voltage is the divider V = e·Z/(Z + Rs) (any AC circuit text, e.g. Hayt & Kemmerly, Engineering
// Circuit Analysis, ch. "Sinusoidal steady-state analysis").
type Complex = [number, number];
const cAdd = (a: Complex, b: Complex): Complex => [a[0] + b[0], a[1] + b[1]];
const cMul = (a: Complex, b: Complex): Complex => [a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0]];
const cInv = (a: Complex): Complex => {
	if (!Number.isFinite(a[0])) return [0, 0];
	const d = a[0] * a[0] + a[1] * a[1];
	return [a[0] / d, -a[1] / d];
};

function impedance(model: DeviceModel, omega: number): Complex {
	switch (model.kind) {
		case 'short':
			return [0, 0];
		case 'open':
			return [Number.POSITIVE_INFINITY, 0];
		case 'resistor':
			return [model.ohms, 0];
		case 'capacitor':
			return [0, -1 / (omega * model.farads)];
		case 'inductor':
			return [0, omega * model.henries];
		case 'series':
			return model.parts.map((p) => impedance(p, omega)).reduce(cAdd, [0, 0]);
		case 'parallel':
			return cInv(model.parts.map((p) => cInv(impedance(p, omega))).reduce(cAdd, [0, 0]));
		default:
			throw new Error(`no impedance for ${model.kind}`);
	}
}

/** Device voltage and current of a linear network from the phasor divider, at the curve's phases. */
function phasorCurve(model: DeviceModel, c: TestConditions, points: number) {
	const z = impedance(model, 2 * Math.PI * c.frequencyHz);
	const h = cMul(z, cInv(cAdd(z, [c.sourceResistanceOhm, 0])));
	const v: number[] = [];
	const i: number[] = [];
	for (let k = 0; k < points; k++) {
		const th = (2 * Math.PI * k) / points;
		// e = Vs·sin θ = Im(Vs·e^{jθ}); V = Im(H·Vs·e^{jθ}).
		const vk = c.sourcePeakV * (h[0] * Math.sin(th) + h[1] * Math.cos(th));
		v.push(vk);
		i.push((c.sourcePeakV * Math.sin(th) - vk) / c.sourceResistanceOhm);
	}
	return { v, i };
}

/** Largest distance between two curves in the normalised plane (full scale = 1). */
function worstNormalised(curve: CanonicalCurve, ref: { v: number[]; i: number[] }): number {
	const { sourcePeakV: vs, sourceResistanceOhm: rs } = curve.conditions;
	let worst = 0;
	for (let k = 0; k < curve.v.length; k++) {
		worst = Math.max(worst, Math.abs(curve.v[k] - ref.v[k]) / vs);
		worst = Math.max(worst, Math.abs(curve.i[k] - ref.i[k]) / (vs / rs));
	}
	return worst;
}

/** Voltage where the curve's current first rises through `current`, by linear interpolation. */
function voltageAtCurrent(curve: CanonicalCurve, current: number): number {
	const n = curve.i.length;
	for (let k = 0; k < n; k++) {
		const a = curve.i[k];
		const b = curve.i[(k + 1) % n];
		if (a < current && b >= current) {
			const w = (current - a) / (b - a);
			return curve.v[k] + w * (curve.v[(k + 1) % n] - curve.v[k]);
		}
	}
	throw new Error(`current never reaches ${current} A`);
}

const bench: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

describe('simulate: the canonical form', () => {
	it('returns a simulated curve of 256 points with e = V + I·Rs = Vs·sin(2πk/N) at point k', () => {
		// Definition of the canonical phase grid (types.ts): point 0 is the source's upward zero
		// crossing, and the tester's loop obeys Kirchhoff's voltage law e = V + I·Rs.
		const model: DeviceModel = {
			kind: 'parallel',
			parts: [{ kind: 'diode', bv: 4.7 }, { kind: 'capacitor', farads: 1e-6 }]
		};
		const curve = simulate(model, bench);
		expect(curve.v).toHaveLength(256);
		expect(curve.simulated).toBe(true);
		curve.v.forEach((v, k) => {
			const e = 10 * Math.sin((2 * Math.PI * k) / 256);
			expect(v + curve.i[k] * 1000).toBeCloseTo(e, 9);
			expect(curve.vn[k]).toBeCloseTo(v / 10, 12);
			expect(curve.in[k]).toBeCloseTo(curve.i[k] / 0.01, 12);
		});
	});

	it('samples the same curve at 4096 points as at 256, every 16th point', () => {
		// Consistency of the phase grid: 2π·16k/4096 = 2π·k/256.
		const model: DeviceModel = {
			kind: 'series',
			parts: [{ kind: 'diode' }, { kind: 'resistor', ohms: 470 }, { kind: 'capacitor', farads: 2e-6 }]
		};
		const coarse = simulate(model, bench);
		const fine = simulate(model, bench, { points: 4096 });
		expect(fine.v).toHaveLength(4096);
		coarse.v.forEach((v, k) => expect(Math.abs(fine.v[16 * k] - v) / 10).toBeLessThan(1e-5));
	});
});

describe('simulate: textbook formulas', () => {
	it('open reads ±Vs with no current, short reads ±Vs/Rs at zero volts', () => {
		// Ohm's law: with no current there is no drop across Rs, so V = e; a short has V = 0 and
		// I = e/Rs.
		const open = simulate({ kind: 'open' }, bench);
		expect(max(open.v)).toBeCloseTo(10, 9);
		expect(min(open.v)).toBeCloseTo(-10, 9);
		expect(maxAbs(open.i)).toBeLessThan(1e-12);
		const short = simulate({ kind: 'short' }, bench);
		expect(maxAbs(short.v)).toBe(0);
		expect(max(short.i)).toBeCloseTo(0.01, 12);
		expect(min(short.i)).toBeCloseTo(-0.01, 12);
	});

	it('gives a resistor the slope V/I = R at every point (Ohm’s law), over random parts and conditions', () => {
		const rnd = random(11);
		for (let trial = 0; trial < 25; trial++) {
			const c = randomConditions(rnd);
			const r = c.sourceResistanceOhm * logUniform(rnd, 0.01, 100);
			const curve = simulate({ kind: 'resistor', ohms: r }, c);
			// Ohm's law plus the divider: peak V = Vs·R/(R + Rs).
			expect(max(curve.v) / c.sourcePeakV).toBeCloseTo(r / (r + c.sourceResistanceOhm), 6);
			curve.v.forEach((v, k) => {
				if (Math.abs(curve.i[k]) > 1e-3 * max(curve.i)) {
					expect(Math.abs(v / curve.i[k] - r) / r).toBeLessThan(1e-6);
				}
			});
		}
	});

	it('draws a capacitor’s peak current Vs/√(Rs² + Xc²) with Xc = 1/(2πfC)', () => {
		// Capacitive reactance and the series RC magnitude (textbook AC circuit analysis).
		const rnd = random(12);
		for (let trial = 0; trial < 20; trial++) {
			const c = randomConditions(rnd);
			const xc = c.sourceResistanceOhm * logUniform(rnd, 0.05, 20);
			const farads = 1 / (2 * Math.PI * c.frequencyHz * xc);
			const curve = simulate({ kind: 'capacitor', farads }, c);
			const expected = c.sourcePeakV / Math.hypot(c.sourceResistanceOhm, xc);
			// The peak falls between grid points; at 256 points the sampled maximum is within
			// 1 − cos(π/256) ≈ 7.5·10⁻⁵ of the true peak.
			expect(Math.abs(max(curve.i) / expected - 1)).toBeLessThan(1e-4);
		}
	});

	it('draws an inductor’s peak current Vs/√(Rs² + XL²) with XL = 2πfL', () => {
		// Inductive reactance and the series RL magnitude (textbook AC circuit analysis).
		const rnd = random(13);
		for (let trial = 0; trial < 20; trial++) {
			const c = randomConditions(rnd, forInductors);
			const xl = c.sourceResistanceOhm * logUniform(rnd, 0.05, 20);
			const henries = xl / (2 * Math.PI * c.frequencyHz);
			const curve = simulate({ kind: 'inductor', henries }, c);
			const expected = c.sourcePeakV / Math.hypot(c.sourceResistanceOhm, xl);
			expect(Math.abs(max(curve.i) / expected - 1)).toBeLessThan(1e-4);
		}
	});

	it('matches the phasor solution of random linear networks over the whole period', () => {
		// Complex impedances and the voltage divider (see `impedance` above).
		const rnd = random(14);
		const shapes = [
			(r: number, c: number, l: number): DeviceModel => ({
				kind: 'parallel',
				parts: [{ kind: 'resistor', ohms: r }, { kind: 'capacitor', farads: c }]
			}),
			(r: number, c: number): DeviceModel => ({
				kind: 'series',
				parts: [{ kind: 'resistor', ohms: r }, { kind: 'capacitor', farads: c }]
			}),
			(r: number, _c: number, l: number): DeviceModel => ({
				kind: 'series',
				parts: [{ kind: 'inductor', henries: l }, { kind: 'resistor', ohms: r / 10 }]
			}),
			(r: number, _c: number, l: number): DeviceModel => ({
				kind: 'parallel',
				parts: [{ kind: 'inductor', henries: l }, { kind: 'resistor', ohms: r }]
			}),
			(r: number, c: number, l: number): DeviceModel => ({
				kind: 'parallel',
				parts: [
					{ kind: 'capacitor', farads: c },
					{ kind: 'series', parts: [{ kind: 'inductor', henries: l }, { kind: 'resistor', ohms: r }] }
				]
			}),
			(r: number, c: number): DeviceModel => ({
				kind: 'series',
				parts: [
					{ kind: 'capacitor', farads: c },
					{ kind: 'short' },
					{ kind: 'parallel', parts: [{ kind: 'resistor', ohms: r }, { kind: 'open' }] },
					{ kind: 'capacitor', farads: 3 * c }
				]
			})
		];
		for (let trial = 0; trial < 36; trial++) {
			const cond = randomConditions(rnd, forInductors);
			const w = 2 * Math.PI * cond.frequencyHz;
			const rs = cond.sourceResistanceOhm;
			const r = rs * logUniform(rnd, 0.1, 10);
			const cap = 1 / (w * rs * logUniform(rnd, 0.1, 10));
			const ind = (rs * logUniform(rnd, 0.1, 10)) / w;
			const model = shapes[trial % shapes.length](r, cap, ind);
			const curve = simulate(model, cond);
			expect(worstNormalised(curve, phasorCurve(model, cond, 256))).toBeLessThan(1e-4);
		}
	});

	it('follows the Shockley equation I = Is·(exp(V/(n·Vt)) − 1) plus I·rs, and at 1 mA reads 655 mV', () => {
		// Shockley diode equation with Vt = kT/q at 300.15 K (k, q exact in the 2019 SI):
		// Vt = 1.380649e-23 · 300.15 / 1.602176634e-19 = 25.864 mV.
		const vt = (1.380649e-23 * 300.15) / 1.602176634e-19;
		expect(THERMAL_VOLTAGE).toBeCloseTo(vt, 12);
		const plain = simulate({ kind: 'diode', is: 1e-14, n: 1 }, bench, { points: 4096 });
		// At a stated current: V(1 mA) = Vt·ln(1e-3/1e-14 + 1) = 0.65512 V.
		expect(vt * Math.log(1e-3 / 1e-14 + 1)).toBeCloseTo(0.65512, 5);
		expect(voltageAtCurrent(plain, 1e-3)).toBeCloseTo(0.65512, 4);

		const rnd = random(15);
		for (let trial = 0; trial < 12; trial++) {
			const c = randomConditions(rnd);
			const is = logUniform(rnd, 1e-15, 1e-8);
			const n = 1 + rnd();
			const rs = rnd() < 0.5 ? 0 : c.sourceResistanceOhm * logUniform(rnd, 1e-3, 0.1);
			const curve = simulate({ kind: 'diode', is, n, rs }, c);
			curve.i.forEach((i, k) => {
				if (i > 1e-3 * (c.sourcePeakV / c.sourceResistanceOhm)) {
					const expected = n * vt * Math.log(i / is + 1) + i * rs;
					expect(Math.abs(curve.v[k] - expected)).toBeLessThan(1e-6 + 1e-6 * Math.abs(expected));
				}
			});
		}
	});

	it('breaks down at −bv carrying ibv, and mirrors when reversed', () => {
		// SPICE's diode parameters BV and IBV: the reverse current is IBV at V = −BV (the
		// breakdown "knee" of a zener). Sign convention (DESIGN.md): anode at probe 1 conducts
		// for positive V; `reversed` puts the cathode at probe 1.
		const zener: DeviceModel = { kind: 'diode', bv: 5.1, ibv: 2e-3 };
		const curve = simulate(zener, bench, { points: 4096 });
		const mirrored = {
			...curve,
			v: curve.v.map((x) => -x),
			i: curve.i.map((x) => -x)
		};
		expect(voltageAtCurrent(mirrored, 2e-3)).toBeCloseTo(5.1, 3);
		expect(min(curve.v)).toBeGreaterThan(-5.4);
		expect(max(curve.v)).toBeLessThan(0.8);

		const reversed = simulate({ ...zener, reversed: true }, bench, { points: 4096 });
		// Reversing the part reflects the curve through the origin; in phase that is half a period.
		reversed.v.forEach((v, k) => expect(v).toBeCloseTo(-curve.v[(k + 2048) % 4096], 6));
	});

	it('combines parts in series and in parallel like resistances add (series) and conductances add (parallel)', () => {
		// Series and parallel resistance rules (Kirchhoff's laws).
		const c: TestConditions = { sourcePeakV: 5, sourceResistanceOhm: 2200, frequencyHz: 400 };
		const series = simulate(
			{
				kind: 'series',
				parts: [
					{ kind: 'resistor', ohms: 1000 },
					{ kind: 'short' },
					{ kind: 'resistor', ohms: 1200 }
				]
			},
			c
		);
		const parallel = simulate(
			{
				kind: 'parallel',
				parts: [{ kind: 'resistor', ohms: 3300 }, { kind: 'resistor', ohms: 6600 }, { kind: 'open' }]
			},
			c
		);
		expect(max(series.v) / max(series.i)).toBeCloseTo(2200, 4);
		expect(max(parallel.v) / max(parallel.i)).toBeCloseTo(2200, 4);
		const shorted = simulate(
			{ kind: 'parallel', parts: [{ kind: 'capacitor', farads: 1e-6 }, { kind: 'short' }] },
			c
		);
		expect(maxAbs(shorted.v)).toBe(0);
	});
});

describe('simulate: random networks over the whole range of conditions', () => {
	// Catalogue-like parts (values recalled from memory for the diodes) in random series/parallel
	// networks, at conditions drawn over the full accepted range.
	const diodes: DeviceModel[] = [
		{ kind: 'diode', is: 2.52e-9, n: 1.752, rs: 0.568 },
		{ kind: 'diode', is: 14.11e-9, n: 1.984, rs: 0.0339 },
		{ kind: 'diode', is: 1e-14, n: 1, rs: 5, bv: 5.1 },
		{ kind: 'diode', is: 1e-12, n: 1.2, rs: 2, bv: 12, ibv: 5e-3 },
		{ kind: 'diode', is: 1e-6, n: 1.05, rs: 0.05 }
	];
	function network(rnd: () => number, depth: number): DeviceModel {
		if (depth === 0 || rnd() < 0.5) {
			const pick = Math.floor(rnd() * 5);
			if (pick === 0) return { kind: 'resistor', ohms: logUniform(rnd, 1, 1e7) };
			if (pick === 1) return { kind: 'capacitor', farads: logUniform(rnd, 1e-11, 1e-2) };
			if (pick === 2) return { kind: 'inductor', henries: logUniform(rnd, 1e-6, 10) };
			const d = diodes[Math.floor(rnd() * diodes.length)];
			return rnd() < 0.5 ? d : ({ ...d, reversed: true } as DeviceModel);
		}
		const parts = Array.from({ length: 2 + Math.floor(rnd() * 2) }, () => network(rnd, depth - 1));
		return { kind: rnd() < 0.5 ? 'series' : 'parallel', parts };
	}

	it('settles every one, obeys e = V + I·Rs and absorbs non-negative average power', () => {
		// Passivity (Tellegen's theorem for networks of R, L, C and diodes): the time-average power
		// V·I a passive network absorbs over a period of steady state is ≥ 0.
		const rnd = random(16);
		for (let trial = 0; trial < 30; trial++) {
			const c: TestConditions = {
				sourcePeakV: logUniform(rnd, 0.05, 100),
				sourceResistanceOhm: logUniform(rnd, 1, 10e6),
				frequencyHz: logUniform(rnd, 1, 100e3)
			};
			const model = network(rnd, 2);
			const curve = simulate(model, c);
			let power = 0;
			curve.v.forEach((v, k) => {
				expect(Number.isFinite(v)).toBe(true);
				const e = c.sourcePeakV * Math.sin((2 * Math.PI * k) / curve.v.length);
				expect(Math.abs(v + curve.i[k] * c.sourceResistanceOhm - e)).toBeLessThan(1e-9 * c.sourcePeakV);
				power += curve.vn[k] * curve.in[k];
			});
			expect(power / curve.v.length).toBeGreaterThan(-1e-6);
		}
	});
});

describe('simulate: facts of the trade', () => {
	it('puts a silicon junction’s knee around 0.5–0.7 V', () => {
		// Common practice, no source: a silicon junction starts to conduct around 0.5–0.7 V. The
		// diode parameters below are small-signal and rectifier diode values recalled from memory
		// (Is ≈ 2.5 nA, n ≈ 1.75, rs ≈ 0.57 Ω; Is ≈ 14 nA, n ≈ 1.98, rs ≈ 0.034 Ω). Knee here: the
		// voltage at 1 mA, a typical tester current.
		for (const diode of [
			{ kind: 'diode', is: 2.52e-9, n: 1.752, rs: 0.568 },
			{ kind: 'diode', is: 14.11e-9, n: 1.984, rs: 0.0339 }
		] as DeviceModel[]) {
			for (const c of [
				bench,
				{ sourcePeakV: 5, sourceResistanceOhm: 1000, frequencyHz: 1000 },
				{ sourcePeakV: 20, sourceResistanceOhm: 2200, frequencyHz: 50 }
			]) {
				const curve = simulate(diode, c, { points: 2048 });
				const knee = voltageAtCurrent(curve, 1e-3);
				expect(knee).toBeGreaterThan(0.5);
				expect(knee).toBeLessThan(0.7);
			}
		}
	});

	const secondary: TestConditions = {
		// Common practice, no source: a 6.3 V rms transformer secondary is ≈ 8.9 V peak.
		sourcePeakV: 6.3 * Math.SQRT2,
		sourceResistanceOhm: 3300,
		frequencyHz: 60
	};

	it('draws ≈ 2.7 mA peak into a short from a 6.3 V rms secondary through 3.3 kΩ', () => {
		// Common practice, no source: 8.9 V / 3.3 kΩ ≈ 2.7 mA.
		expect(secondary.sourcePeakV).toBeCloseTo(8.9, 1);
		const curve = simulate({ kind: 'short' }, secondary);
		expect(max(curve.i)).toBeCloseTo(2.7e-3, 4);
	});

	it('shows 1000 µF at 60 Hz (≈ 2.65 Ω) as almost a short, settling in a few periods despite τ ≈ 200 periods', () => {
		// Common practice, no source: 1000 µF at 60 Hz is Xc ≈ 2.65 Ω and reads almost as a short.
		// Rs·C = 3.3 s ≈ 198 periods at 60 Hz: plain transient would need thousands of periods to
		// settle to 10⁻⁶; shooting must not.
		expect(1 / (2 * Math.PI * 60 * 1e-3)).toBeCloseTo(2.65, 2);
		const stats: SimulationStats = { periods: 0, steps: 0, newtonIterations: 0 };
		const curve = simulate({ kind: 'capacitor', farads: 1e-3 }, secondary, { stats });
		expect(maxAbs(curve.vn)).toBeLessThan(0.001);
		expect(maxAbs(curve.in)).toBeGreaterThan(0.999);
		expect(stats.periods).toBeLessThanOrEqual(5);
		// Still a capacitor: the voltage peaks where the current crosses zero (quarter period lag).
		const kPeak = curve.v.indexOf(max(curve.v));
		expect(Math.abs(curve.in[kPeak])).toBeLessThan(0.01);
	});

	it('shows 0.47 µF at 60 Hz with 3.3 kΩ (Xc ≈ 5.6 kΩ) as a clear ellipse', () => {
		// Common practice, no source: Xc = 1/(2π·60·0.47 µF) ≈ 5.64 kΩ, comparable to Rs, so both
		// axes of the ellipse are large. Textbook: Vpeak/Vs = Xc/√(Rs² + Xc²), Ipeak/Isc = Rs/√(…).
		const xc = 1 / (2 * Math.PI * 60 * 0.47e-6);
		expect(xc).toBeGreaterThan(5600);
		expect(xc).toBeLessThan(5700);
		const curve = simulate({ kind: 'capacitor', farads: 0.47e-6 }, secondary);
		const vAxis = max(curve.vn);
		const iAxis = max(curve.in);
		expect(vAxis).toBeCloseTo(xc / Math.hypot(3300, xc), 3);
		expect(iAxis).toBeCloseTo(3300 / Math.hypot(3300, xc), 3);
		expect(vAxis).toBeGreaterThan(0.3);
		expect(iAxis).toBeGreaterThan(0.3);
	});
});

describe('simulate: refusals', () => {
	it('refuses conditions outside the accepted ranges', () => {
		expect(() =>
			simulate({ kind: 'open' }, { sourcePeakV: 500, sourceResistanceOhm: 1000, frequencyHz: 60 })
		).toThrowError(expect.objectContaining({ code: 'bad_conditions' }));
	});

	it('refuses a point count outside the supported range', () => {
		expect(() => simulate({ kind: 'open' }, bench, { points: 3 })).toThrow(RangeError);
		expect(() => simulate({ kind: 'open' }, bench, { points: 100.5 })).toThrow(RangeError);
	});

	it('refuses an invalid model passed straight to simulate', () => {
		expect(() => simulate({ kind: 'resistor', ohms: -5 }, bench)).toThrowError(
			expect.objectContaining({ code: 'bad_model' })
		);
	});
});

describe('parseModel', () => {
	it('accepts nested series and parallel networks, as objects or as JSON text', () => {
		const model = {
			kind: 'parallel',
			parts: [
				{ kind: 'diode', is: 1e-12, n: 1.5, rs: 2, bv: 5.6, ibv: 1e-3, reversed: true },
				{ kind: 'series', parts: [{ kind: 'inductor', henries: 0.1 }, { kind: 'resistor', ohms: 50 }] },
				{ kind: 'capacitor', farads: 1e-9 },
				{ kind: 'open' },
				{ kind: 'short' }
			]
		};
		expect(parseModel(model)).toEqual(model);
		expect(parseModel(JSON.stringify(model))).toEqual(model);
	});

	const bad: [string, unknown, RegExp][] = [
		['a negative resistance', { kind: 'resistor', ohms: -1 }, /^ohms: Resistance ohms must be between/],
		['a zero capacitance', { kind: 'capacitor', farads: 0 }, /^farads: Capacitance/],
		['a missing value', { kind: 'inductor' }, /^henries: Inductance henries must be a number/],
		['a value given as text', { kind: 'resistor', ohms: '1k' }, /^ohms: .*must be a number/],
		['NaN', { kind: 'resistor', ohms: Number.NaN }, /^ohms:/],
		['infinity', { kind: 'resistor', ohms: Number.POSITIVE_INFINITY }, /^ohms:/],
		['an unknown kind', { kind: 'transistor' }, /kind: one of open, short, resistor/],
		['no kind', { ohms: 5 }, /kind: one of/],
		['an unknown field', { kind: 'resistor', ohms: 5, tolerance: 0.05 }, /Unknown field tolerance/],
		[
			'a bad value deep inside',
			{ kind: 'series', parts: [{ kind: 'short' }, { kind: 'parallel', parts: [{ kind: 'diode', n: 50 }] }] },
			/^parts\[1\]\.parts\[0\]\.n: Emission coefficient/
		],
		['an empty list', { kind: 'series', parts: [] }, /at least one part/],
		['an array', [{ kind: 'open' }], /must be a JSON object/],
		['null', null, /must be a JSON object/],
		['broken JSON text', '{"kind": "resistor", "ohms": }', /not valid JSON/],
		[
			'a list too long',
			{ kind: 'parallel', parts: Array.from({ length: 33 }, () => ({ kind: 'open' })) },
			/at most 32 parts/
		],
		[
			'too many parts in all',
			{
				kind: 'series',
				parts: Array.from({ length: 3 }, () => ({
					kind: 'parallel',
					parts: Array.from({ length: 30 }, () => ({ kind: 'resistor', ohms: 1 }))
				}))
			},
			/more than 64 parts/
		]
	];

	it.each(bad)('refuses %s with a bad_model error naming the problem', (_what, input, message) => {
		try {
			parseModel(input);
			expect.unreachable('parseModel accepted a bad model');
		} catch (e) {
			expect(e).toBeInstanceOf(SignatureError);
			expect((e as SignatureError).code).toBe('bad_model');
			expect((e as SignatureError).message).toMatch(message);
		}
	});

	it('refuses nesting deeper than the limit without overflowing the stack', () => {
		let deep: unknown = { kind: 'open' };
		for (let d = 0; d < 100_000; d++) deep = { kind: 'series', parts: [deep] };
		expect(() => parseModel(deep)).toThrowError(/nests series\/parallel lists more than 8 deep/);
		let ok: unknown = { kind: 'resistor', ohms: 10 };
		for (let d = 0; d < MODEL_LIMITS.depth; d++) ok = { kind: 'series', parts: [ok] };
		expect(() => parseModel(ok)).not.toThrow();
	});
});
