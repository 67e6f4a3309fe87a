/**
 * Round trips through the whole engine: simulate a part → write a bench-like capture file (every
 * format, random start phase, a non-whole number of periods, odd sample counts, noise and ADC
 * quantisation) → parse → canonicalise → analyse, and check that the class and parameters come
 * back, and that the recovered curve is closer to the clean one than the clean one is to its near
 * neighbour.
 */
import { describe, expect, it } from 'vitest';
import { analyse, KNEE_CURRENT_FRACTION } from '../../src/lib/signature/analyse';
import { canonicalise } from '../../src/lib/signature/canonical';
import { shapeDistance } from '../../src/lib/signature/compare';
import { analyseCapture } from '../../src/lib/signature/index';
import { parseCapture } from '../../src/lib/signature/parse';
import { simulate, THERMAL_VOLTAGE } from '../../src/lib/signature/simulate';
import type {
	CanonicalCurve,
	CaptureFormat,
	DeviceModel,
	Parameter,
	ParameterName,
	SignatureClass,
	TestConditions
} from '../../src/lib/signature/types';
import { randomStyle, seededRandom, synthesiseCapture, synthesiseSamples, uniform, writeCapture } from '../support/captures';

interface Case {
	name: string;
	model: DeviceModel;
	/** The near neighbour that must stay farther away than the recovered curve. */
	neighbour: DeviceModel;
	conditions: TestConditions;
	class: SignatureClass;
	/** Expected parameter values with their relative (or absolute, in V) tolerance. */
	expect: Partial<Record<ParameterName, { value: number; rel?: number; abs?: number }>>;
	polarity?: 'anode-at-probe-1' | 'cathode-at-probe-1';
	/** White noise per channel as a fraction of full scale (default 1 %). */
	noise?: number;
}

const c60 = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
// Shockley diode equation V = n·Vt·ln(I/Is + 1) at the knee current (a fraction of Vs/Rs), with
// Is = 1e-14 A and n = 1 (a silicon small-signal diode; values from memory, as SPICE defaults).
const shockleyKnee = (c: TestConditions) =>
	THERMAL_VOLTAGE * Math.log((KNEE_CURRENT_FRACTION * c.sourcePeakV) / c.sourceResistanceOhm / 1e-14 + 1);

const cases: Case[] = [
	{
		// Ohm's law: the resistance itself, within the 2 % target.
		name: '2.2 kΩ resistor at 10 V · 1 kΩ · 60 Hz',
		model: { kind: 'resistor', ohms: 2200 },
		neighbour: { kind: 'resistor', ohms: 2700 },
		conditions: c60,
		class: 'resistive',
		expect: { resistanceOhm: { value: 2200, rel: 0.02 } }
	},
	{
		// Xc = 1/(2πfC) ≈ 5.6 kΩ against 3.3 kΩ: a clear ellipse (common practice, no source: a
		// 6.3 V rms secondary ≈ 8.9 V peak).
		name: '0.47 µF at 8.9 V · 3.3 kΩ · 60 Hz',
		model: { kind: 'capacitor', farads: 0.47e-6 },
		neighbour: { kind: 'capacitor', farads: 0.56e-6 },
		conditions: { sourcePeakV: 8.9, sourceResistanceOhm: 3300, frequencyHz: 60 },
		class: 'capacitive',
		expect: { capacitanceF: { value: 0.47e-6, rel: 0.05 } }
	},
	{
		// XL = 2πfL ≈ 628 Ω with 50 Ω winding resistance, against 1 kΩ.
		name: '100 mH + 50 Ω at 10 V · 1 kΩ · 1 kHz',
		model: {
			kind: 'series',
			parts: [
				{ kind: 'inductor', henries: 0.1 },
				{ kind: 'resistor', ohms: 50 }
			]
		},
		neighbour: {
			kind: 'series',
			parts: [
				{ kind: 'inductor', henries: 0.12 },
				{ kind: 'resistor', ohms: 50 }
			]
		},
		conditions: { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 1000 },
		class: 'inductive',
		expect: { inductanceH: { value: 0.1, rel: 0.05 } }
	},
	{
		// R ‖ C phasor solution: both the capacitance and its leakage come back.
		name: '2.2 kΩ ‖ 1 µF at 10 V · 1 kΩ · 60 Hz',
		model: {
			kind: 'parallel',
			parts: [
				{ kind: 'resistor', ohms: 2200 },
				{ kind: 'capacitor', farads: 1e-6 }
			]
		},
		neighbour: {
			kind: 'parallel',
			parts: [
				{ kind: 'resistor', ohms: 2700 },
				{ kind: 'capacitor', farads: 1e-6 }
			]
		},
		conditions: c60,
		class: 'capacitive',
		expect: { capacitanceF: { value: 1e-6, rel: 0.05 }, leakageOhm: { value: 2200, rel: 0.05 } }
	},
	{
		// Shockley equation at the knee current; a silicon knee is 0.5–0.7 V (common practice).
		name: 'silicon diode at 10 V · 1 kΩ · 60 Hz',
		model: { kind: 'diode' },
		neighbour: { kind: 'diode', is: 1e-9 },
		conditions: c60,
		class: 'junction',
		expect: { kneeV: { value: shockleyKnee(c60), abs: 0.05 } },
		polarity: 'anode-at-probe-1',
		// 1 % of 10 V is 100 mV of noise per sample, twice the 50 mV knee target: a sparse capture
		// (a few samples per grid point) cannot pin the knee that closely. 0.5 % is 50 mV.
		noise: 0.005
	},
	{
		name: 'diode with its cathode at probe 1, 5 V · 470 Ω · 1 kHz',
		model: { kind: 'diode', reversed: true },
		neighbour: { kind: 'diode', reversed: true, is: 1e-9 },
		conditions: { sourcePeakV: 5, sourceResistanceOhm: 470, frequencyHz: 1000 },
		class: 'junction',
		expect: { kneeV: { value: shockleyKnee({ sourcePeakV: 5, sourceResistanceOhm: 470, frequencyHz: 1000 }), abs: 0.05 } },
		polarity: 'cathode-at-probe-1',
		noise: 0.005
	},
	{
		// A 5.1 V zener breaks down at 5.1 V (at its test current, here 1 mA = 0.1 of Vs/Rs).
		name: '5.1 V zener at 10 V · 1 kΩ · 60 Hz',
		model: { kind: 'diode', bv: 5.1, ibv: 1e-3 },
		neighbour: { kind: 'diode', bv: 5.6, ibv: 1e-3 },
		conditions: c60,
		class: 'zener',
		expect: { breakdownV: { value: 5.1, rel: 0.03 }, kneeV: { value: shockleyKnee(c60), abs: 0.05 } },
		noise: 0.005
	},
	{
		// Open = a flat line at ±Vs (textbook: no current, all the source across the probes).
		name: 'open at 10 V · 1 kΩ · 60 Hz',
		model: { kind: 'open' },
		neighbour: { kind: 'resistor', ohms: 20_000 },
		conditions: c60,
		class: 'open',
		expect: {}
	},
	{
		// Short = a vertical line at ±Vs/Rs; 6.3 V rms ≈ 8.9 V peak through 3.3 kΩ is ≈ 2.7 mA peak
		// (common practice, no source).
		name: 'short at 8.9 V · 3.3 kΩ · 60 Hz',
		model: { kind: 'short' },
		neighbour: { kind: 'resistor', ohms: 150 },
		conditions: { sourcePeakV: 8.9, sourceResistanceOhm: 3300, frequencyHz: 60 },
		class: 'short',
		expect: {}
	}
];

function numeric(p: Parameter | undefined): number {
	if (!p || !('value' in p) || typeof p.value !== 'number') throw new Error(`no value: ${JSON.stringify(p)}`);
	return p.value;
}

const FORMATS: CaptureFormat[] = ['vi-csv', 'scope-csv', 'json'];

describe('round trip: simulate → capture file → parse → canonical → analyse', () => {
	it.each(cases)('$name', (tc) => {
		const rng = seededRandom(tc.name.length * 7919);
		const fine = simulate(tc.model, tc.conditions, { points: 4096 });
		const clean = simulate(tc.model, tc.conditions);
		const near = simulate(tc.neighbour, tc.conditions);
		const gap = shapeDistance(clean, near);
		for (let trial = 0; trial < 6; trial++) {
			const format = FORMATS[trial % 3];
			const capture = synthesiseCapture(fine, {
				rng,
				style: randomStyle(rng, format),
				noise: tc.noise ?? 0.01,
				periods: uniform(rng, 1.3, 12),
				samplesPerPeriod: Math.round(uniform(rng, 60, 3000))
			});
			const label = `${tc.name}, trial ${trial}, ${JSON.stringify(capture.style)}`;
			const parsed = parseCapture(capture.text, capture.parseOptions);
			expect(parsed.format, label).toBe(format);
			expect(parsed.count % 2, label).toBe(1);
			const curve: CanonicalCurve = canonicalise(parsed.samples, tc.conditions);
			expect(curve.periods, label).toBe(Math.floor(capture.samples.periods));
			const analysis = analyse(curve);
			expect(analysis.class, `${label}: ${analysis.summary}`).toBe(tc.class);
			for (const [name, want] of Object.entries(tc.expect)) {
				const got = numeric(analysis.parameters[name as ParameterName]);
				const tol = want!.abs ?? want!.rel! * want!.value;
				expect(Math.abs(got - want!.value), `${label}: ${name} = ${got}`).toBeLessThanOrEqual(tol);
			}
			if (tc.polarity) {
				const p = analysis.parameters.polarity;
				expect(p && 'value' in p ? p.value : undefined, label).toBe(tc.polarity);
			}
			const d = shapeDistance(curve, clean);
			expect(d, `${label}: distance to the clean curve`).toBeLessThan(gap);
		}
	});
});

describe('analyseCapture', () => {
	it('runs parse → units → canonical → analyse in one call and gathers the warnings', () => {
		// 2.2 kΩ at 10 V · 1 kΩ: Ohm's law gives the resistance back within 2 %.
		const fine = simulate({ kind: 'resistor', ohms: 2200 }, c60, { points: 4096 });
		const s = synthesiseSamples(fine, { rng: seededRandom(31), noise: 0.01, samplesPerPeriod: 700, periods: 3.6 });
		const file = writeCapture(s, {
			format: 'vi-csv', delimiter: '\t', header: null, voltageUnit: 'V', currentUnit: 'mA',
			withTime: false, currentFirst: false, crlf: true, bom: false, comments: true, decimalComma: false
		});
		// The file says nothing of its units and none are entered: mA is inferred (and said so).
		const r = analyseCapture(file.text, c60);
		expect(r.capture.format).toBe('vi-csv');
		expect(r.curve.periods).toBe(3);
		expect(r.analysis.class).toBe('resistive');
		expect(Math.abs(numeric(r.analysis.parameters.resistanceOhm) / 2200 - 1)).toBeLessThan(0.02);
		expect(r.warnings.some((w) => /does not state its units/.test(w))).toBe(true);
		// With the unit entered, the same result and no guess.
		const told = analyseCapture(file.text, c60, file.parseOptions);
		expect(told.warnings.some((w) => /does not state its units/.test(w))).toBe(false);
		expect(numeric(told.analysis.parameters.resistanceOhm)).toBeCloseTo(numeric(r.analysis.parameters.resistanceOhm), 6);
	});
});
