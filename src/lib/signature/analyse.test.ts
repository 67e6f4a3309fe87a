import { describe, expect, it } from 'vitest';
import { linearCurve, seededRandom, withNoise } from '../../../tests/support/analytic';
import { analyse, fitEllipse, KNEE_CURRENT_FRACTION } from './analyse';
import { simulate } from './simulate';
import type { Parameter, TestConditions } from './types';

const at = (sourcePeakV: number, sourceResistanceOhm: number, frequencyHz: number): TestConditions => ({
	sourcePeakV,
	sourceResistanceOhm,
	frequencyHz
});

function value(p: Parameter | undefined): number {
	if (!p || !('value' in p) || typeof p.value !== 'number') {
		throw new Error(`expected a measured value, got ${JSON.stringify(p)}`);
	}
	return p.value;
}

describe('analyse: linear parts', () => {
	// Ohm's law and the voltage divider: V = Vs·R/(R + Rs), so the slope recovers R exactly.
	it.each([
		[2200, at(10, 1000, 60)],
		[100, at(5, 1000, 1000)],
		[47, at(2, 10, 50)],
		[68e3, at(20, 10e3, 120)],
		[1e6, at(50, 100e3, 60)]
	])('recovers a %d Ω resistor from its slope (Ohm’s law)', (ohms, c) => {
		const a = analyse(linearCurve({ kind: 'resistor', ohms }, c));
		expect(a.class).toBe('resistive');
		expect(value(a.parameters.resistanceOhm)).toBeCloseTo(ohms, 6 - Math.round(Math.log10(ohms)));
		expect(a.residual).toBeLessThan(1e-6);
	});

	// Textbook: Xc = 1/(2πfC); the capacitor's peak current is Vs/√(Rs² + Xc²).
	it.each([
		[1e-6, at(10, 1000, 60)],
		[0.47e-6, at(10, 3300, 60)],
		[10e-9, at(5, 10e3, 1000)],
		[100e-6, at(2, 100, 50)]
	])('recovers a %d F capacitor and its textbook peak current', (farads, c) => {
		const curve = linearCurve({ kind: 'capacitor', farads }, c);
		const xc = 1 / (2 * Math.PI * c.frequencyHz * farads);
		const peak = Math.max(...curve.i.map(Math.abs));
		expect(peak).toBeCloseTo(c.sourcePeakV / Math.hypot(c.sourceResistanceOhm, xc), 4);
		const a = analyse(curve);
		expect(a.class).toBe('capacitive');
		expect(value(a.parameters.capacitanceF) / farads).toBeCloseTo(1, 6);
		expect(a.parameters.leakageOhm).toHaveProperty('unmeasurable');
	});

	// Textbook R‖C: Y = 1/R + jωC.
	it('separates a leaky capacitor into C and its parallel leakage (R‖C phasor fit)', () => {
		const a = analyse(linearCurve({ kind: 'capacitor', farads: 1e-6, leakageOhm: 4700 }, at(10, 1000, 60)));
		expect(a.class).toBe('capacitive');
		expect(value(a.parameters.capacitanceF) / 1e-6).toBeCloseTo(1, 6);
		expect(value(a.parameters.leakageOhm) / 4700).toBeCloseTo(1, 6);
	});

	// Textbook R+L: Z = R + jωL, XL = 2πfL.
	it('separates an inductor into L and its winding resistance (R+L phasor fit)', () => {
		const a = analyse(linearCurve({ kind: 'inductor', henries: 0.5, seriesOhm: 33 }, at(10, 1000, 400)));
		expect(a.class).toBe('inductive');
		expect(value(a.parameters.inductanceH) / 0.5).toBeCloseTo(1, 6);
		expect(value(a.parameters.seriesResistanceOhm) / 33).toBeCloseTo(1, 6);
	});

	// Textbook: an open carries no current, so V = ±Vs; a short has no voltage, so I = ±Vs/Rs.
	it('calls a curve at ±Vs with no current an open, and one at ±Vs/Rs with no voltage a short', () => {
		expect(analyse(linearCurve({ kind: 'open' }, at(10, 1000, 60))).class).toBe('open');
		expect(analyse(linearCurve({ kind: 'short' }, at(10, 1000, 60))).class).toBe('short');
	});

	// Common practice, no source: a 6.3 V rms secondary is ≈ 8.9 V peak; with 3.3 kΩ a short draws
	// ≈ 2.7 mA peak.
	it('reads a short on a 6.3 V rms, 3.3 kΩ tester as ≈ 2.7 mA peak', () => {
		const curve = linearCurve({ kind: 'short' }, at(6.3 * Math.SQRT2, 3300, 60));
		expect(Math.max(...curve.i)).toBeCloseTo(2.7e-3, 4);
		expect(analyse(curve).class).toBe('short');
	});

	// The tester's resolution: 1 MΩ at Rs = 100 Ω carries 10⁻⁴ of full-scale current (Ohm's law), far
	// below what a bench resolves, so it must read as an open and say so.
	it('reports a 1 MΩ resistor at Rs = 100 Ω as an open with its resistance unmeasurable', () => {
		const a = analyse(linearCurve({ kind: 'resistor', ohms: 1e6 }, at(10, 100, 60)));
		expect(a.class).toBe('open');
		expect(a.parameters.resistanceOhm).toHaveProperty('unmeasurable');
	});

	// Common practice, no source: 1000 µF at 60 Hz is ≈ 2.65 Ω (Xc = 1/(2πfC)) and reads almost as a
	// short; 0.47 µF at 60 Hz with 3.3 kΩ (Xc ≈ 5.6 kΩ) is a clear ellipse.
	it('reads 1000 µF at 60 Hz as a short and 0.47 µF at 60 Hz, 3.3 kΩ as a capacitor', () => {
		const big = analyse(linearCurve({ kind: 'capacitor', farads: 1000e-6 }, at(8.9, 3300, 60)));
		expect(big.class).toBe('short');
		expect(big.parameters.capacitanceF).toHaveProperty('unmeasurable');
		const small = analyse(linearCurve({ kind: 'capacitor', farads: 0.47e-6 }, at(8.9, 3300, 60)));
		expect(small.class).toBe('capacitive');
		expect(value(small.parameters.capacitanceF) / 0.47e-6).toBeCloseTo(1, 4);
	});

	// A series R–C is still a linear part with a leading current: the textbook phasor Z = R − j/(ωC).
	it('calls a series R–C capacitive (its phasor leads)', () => {
		const a = analyse(linearCurve({ kind: 'series-rc', ohms: 470, farads: 2.2e-6 }, at(10, 1000, 60)));
		expect(a.class).toBe('capacitive');
	});

	it('keeps parameters within their stated uncertainty under noise (3 σ, 40 seeded draws)', () => {
		const rand = seededRandom(7);
		const c = at(10, 1000, 60);
		let outside = 0;
		for (let k = 0; k < 40; k++) {
			const a = analyse(withNoise(linearCurve({ kind: 'resistor', ohms: 2200 }, c), 0.005, rand));
			const p = a.parameters.resistanceOhm;
			if (!p || !('uncertainty' in p) || typeof p.value !== 'number') throw new Error('no resistance');
			expect(a.class).toBe('resistive');
			if (Math.abs(p.value - 2200) > 3 * (p.uncertainty ?? 0)) outside++;
		}
		// Under Gaussian noise 3 σ holds 99.7 % of the time; allow two of forty.
		expect(outside).toBeLessThanOrEqual(2);
	});
});

/** Thermal voltage kT/q at 300 K (k, q exact in the 2019 SI). */
const VT = (1.380649e-23 * 300) / 1.602176634e-19;

/**
 * Shockley's diode equation with a series resistance, solved for the voltage at current I:
 * V = n·Vt·ln(1 + I/Is) + I·rs.
 */
const shockleyV = (current: number, is: number, n: number, rs: number) =>
	n * VT * Math.log(1 + current / is) + current * rs;

describe('analyse: junctions and zeners', () => {
	// Common practice, no source: a silicon junction starts to conduct around 0.5–0.7 V.
	it('finds a silicon junction’s knee between 0.5 and 0.7 V, anode at probe 1', () => {
		const a = analyse(simulate({ kind: 'diode' }, at(10, 1000, 60)));
		expect(a.class).toBe('junction');
		expect(value(a.parameters.kneeV)).toBeGreaterThan(0.5);
		expect(value(a.parameters.kneeV)).toBeLessThan(0.7);
		expect(a.parameters.polarity).toEqual({ value: 'anode-at-probe-1', unit: '' });
	});

	// Shockley equation at the stated current (KNEE_CURRENT_FRACTION of Vs/Rs).
	it.each([
		[{ is: 1e-14, n: 1, rs: 0 }, at(10, 1000, 60), false],
		[{ is: 1e-9, n: 1.9, rs: 5 }, at(5, 470, 50), true],
		[{ is: 2e-12, n: 1.4, rs: 50 }, at(20, 10e3, 1000), false],
		[{ is: 1e-15, n: 1.1, rs: 1 }, at(2, 100, 400), true]
	])('matches the Shockley equation at the knee current for %o at %o (reversed %s)', (d, c, reversed) => {
		const a = analyse(simulate({ kind: 'diode', ...d, reversed }, c));
		expect(a.class).toBe('junction');
		const current = (KNEE_CURRENT_FRACTION * c.sourcePeakV) / c.sourceResistanceOhm;
		expect(Math.abs(value(a.parameters.kneeV) - shockleyV(current, d.is, d.n, d.rs))).toBeLessThan(0.005);
		expect(a.parameters.polarity).toEqual({
			value: reversed ? 'cathode-at-probe-1' : 'anode-at-probe-1',
			unit: ''
		});
	});

	// Breakdown modelled as in SPICE: reverse current Ibv·exp((|V| − Bv)/(n·Vt)), so at current I the
	// reverse voltage is Bv + n·Vt·ln(I/Ibv) + I·rs.
	it.each([
		[5.1, false, at(10, 1000, 60)],
		[12, true, at(20, 2200, 50)],
		[3.3, false, at(8, 330, 1000)]
	])('finds a %d V zener’s breakdown and both knees (reversed %s)', (bv, reversed, c) => {
		const a = analyse(simulate({ kind: 'diode', bv, ibv: 1e-3, reversed }, c));
		expect(a.class).toBe('zener');
		const current = (KNEE_CURRENT_FRACTION * c.sourcePeakV) / c.sourceResistanceOhm;
		const expected = bv + VT * Math.log(current / 1e-3);
		expect(value(a.parameters.breakdownV) / expected).toBeCloseTo(1, 2);
		expect(Math.sign(value(a.parameters.reverseKneeV))).toBe(reversed ? 1 : -1);
		expect(value(a.parameters.kneeV)).toBeCloseTo(shockleyV(current, 1e-14, 1, 0), 2);
		expect(a.parameters.polarity).toEqual({
			value: reversed ? 'cathode-at-probe-1' : 'anode-at-probe-1',
			unit: ''
		});
	});

	// Shockley equation again: the knee must not depend on how finely the period is sampled.
	it('reads the same knee from a 4096-point or an odd-length grid', () => {
		const c = at(10, 1000, 60);
		const expected = shockleyV((KNEE_CURRENT_FRACTION * 10) / 1000, 1e-14, 1, 0);
		for (const points of [4096, 101]) {
			const a = analyse(simulate({ kind: 'diode' }, c, { points }));
			expect(a.class).toBe('junction');
			expect(Math.abs(value(a.parameters.kneeV) - expected)).toBeLessThan(0.005);
		}
	});

	// Kirchhoff's voltage law with the Shockley equation: in series the voltages add at the same
	// current, so two junctions double the knee and a resistor adds I·R.
	it('adds series voltages to the knee: two junctions, or a junction and a resistor', () => {
		const c = at(10, 1000, 60);
		const current = (KNEE_CURRENT_FRACTION * 10) / 1000;
		const one = shockleyV(current, 1e-14, 1, 0);
		const two = analyse(simulate({ kind: 'series', parts: [{ kind: 'diode' }, { kind: 'diode' }] }, c));
		expect(two.class).toBe('junction');
		expect(Math.abs(value(two.parameters.kneeV) - 2 * one)).toBeLessThan(0.005);
		const withR = analyse(
			simulate({ kind: 'series', parts: [{ kind: 'diode' }, { kind: 'resistor', ohms: 1000 }] }, c)
		);
		expect(withR.class).toBe('junction');
		expect(Math.abs(value(withR.parameters.kneeV) - (one + current * 1000))).toBeLessThan(0.005);
	});

	// Ohm's law on the reverse branch: a diode in parallel with R conducts V/R backwards.
	it('reads a resistor across a junction as its leakage', () => {
		const a = analyse(
			simulate({ kind: 'parallel', parts: [{ kind: 'diode' }, { kind: 'resistor', ohms: 4700 }] }, at(10, 1000, 60))
		);
		expect(a.class).toBe('junction');
		expect(value(a.parameters.leakageOhm) / 4700).toBeCloseTo(1, 2);
	});

	// Shockley: at 0.2 V a junction with Is = 1e-14 A carries ≈ 2e-11 A, nothing a tester can see.
	it('reads a junction driven below its knee as an open', () => {
		expect(analyse(simulate({ kind: 'diode' }, at(0.2, 1000, 60))).class).toBe('open');
	});

	// A junction with a capacitor across it traces a loop with a knee: neither a static part nor a
	// linear one (textbook: the capacitor's current leads, the junction's is a function of voltage).
	it('calls a junction with a capacitor across it complex, with a large residual', () => {
		const c = at(10, 1000, 60);
		const farads = 1 / (2 * Math.PI * 60 * 1000);
		const a = analyse(simulate({ kind: 'parallel', parts: [{ kind: 'diode' }, { kind: 'capacitor', farads }] }, c));
		expect(a.class).toBe('complex');
		expect(a.residual).toBeGreaterThan(0.05);
	});
});

describe('fitEllipse (Fitzgibbon, Pilu & Fisher 1999 direct least squares)', () => {
	// Analytic geometry: (x − 0.1)²/0.5² + (y + 0.2)²/0.2² = 1 expands to a known conic, centre (0.1, −0.2).
	it('recovers a known ellipse and its centre', () => {
		const x: number[] = [];
		const y: number[] = [];
		for (let k = 0; k < 64; k++) {
			const t = (2 * Math.PI * k) / 64;
			x.push(0.1 + 0.5 * Math.cos(t));
			y.push(-0.2 + 0.2 * Math.sin(t));
		}
		const fit = fitEllipse(x, y);
		expect(fit).toBeDefined();
		expect(fit!.centre[0]).toBeCloseTo(0.1, 8);
		expect(fit!.centre[1]).toBeCloseTo(-0.2, 8);
		// a/c = (1/0.25)/(1/0.04) = 0.16, b = 0.
		const [a, b, c] = fit!.conic;
		expect(a / c).toBeCloseTo(0.16, 8);
		expect(b / c).toBeCloseTo(0, 8);
	});
});
