/**
 * The simulator against ngspice (Debian's package `ngspice`), the outside oracle for the tester
 * circuit: for each device and condition both must draw the same canonical curve within 1 % of
 * full scale RMS in the normalised plane. ngspice integrates with its own method (trapezoidal with
 * adaptive steps) from rest over 12 periods; we check that it has itself settled before comparing.
 * When ngspice is missing every test here fails with the command that installs it.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { simulate } from '../../src/lib/signature/simulate';
import type { DeviceModel, TestConditions } from '../../src/lib/signature/types';
import {
	findNgspice,
	NGSPICE_INSTALL_HINT,
	normalisedRms,
	runNgspice,
	type OracleCase,
	type OracleResult
} from '../support/ngspice';

/** The spec's bound: within 1 % of full scale RMS. */
const TOLERANCE = 0.01;
/** ngspice's own last two periods must agree this well, or the comparison would be unfair. */
const SETTLED = 1e-4;

// Small-signal silicon diode parameters recalled from memory (Is ≈ 2.5 nA, n ≈ 1.75, rs ≈ 0.57 Ω).
const signalDiode = { kind: 'diode', is: 2.52e-9, n: 1.752, rs: 0.568 } as const;

/** Conditions spanning Rs = 100 Ω…100 kΩ, f = 50 Hz…1 kHz, Vs = 5…20 V. */
const conditionSet: TestConditions[] = [
	{ sourcePeakV: 5, sourceResistanceOhm: 100, frequencyHz: 50 },
	{ sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 },
	{ sourcePeakV: 12, sourceResistanceOhm: 10e3, frequencyHz: 400 },
	{ sourcePeakV: 20, sourceResistanceOhm: 100e3, frequencyHz: 1000 }
];

/** The circuits of the spec, with values scaled so each draws a telling curve at `c`. */
function namedCircuits(c: TestConditions): { name: string; model: DeviceModel }[] {
	const rs = c.sourceResistanceOhm;
	const w = 2 * Math.PI * c.frequencyHz;
	const capacitorAtXcRs: DeviceModel = { kind: 'capacitor', farads: 1 / (w * rs) };
	return [
		{ name: 'resistor', model: { kind: 'resistor', ohms: 1.5 * rs } },
		{ name: 'capacitor', model: capacitorAtXcRs },
		{
			name: 'inductor with winding resistance',
			model: {
				kind: 'series',
				parts: [
					{ kind: 'inductor', henries: (2 * rs) / w },
					{ kind: 'resistor', ohms: 0.1 * rs }
				]
			}
		},
		{ name: 'diode', model: signalDiode },
		{
			name: 'zener',
			model: { kind: 'diode', is: 1e-14, n: 1.1, rs: 5, bv: Math.round(c.sourcePeakV / 2), ibv: 1e-3 }
		},
		{
			name: 'diode ‖ R',
			model: { kind: 'parallel', parts: [signalDiode, { kind: 'resistor', ohms: 2 * rs }] }
		},
		{
			name: 'R ‖ C',
			model: { kind: 'parallel', parts: [{ kind: 'resistor', ohms: 2 * rs }, capacitorAtXcRs] }
		},
		{
			name: 'diode + series R',
			model: { kind: 'series', parts: [signalDiode, { kind: 'resistor', ohms: rs / 2 }] }
		}
	];
}

// Seeded random numbers (mulberry32) so every run draws the same parts and conditions.
function random(seed: number): () => number {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

/** Random parts and conditions over the same span, reactances within 0.2–5 × Rs (so 12 periods settle). */
function randomCases(count: number, seed: number): { name: string; model: DeviceModel; c: TestConditions }[] {
	const rnd = random(seed);
	const logU = (lo: number, hi: number) => Math.exp(Math.log(lo) + rnd() * (Math.log(hi) - Math.log(lo)));
	const out: { name: string; model: DeviceModel; c: TestConditions }[] = [];
	for (let k = 0; k < count; k++) {
		const c: TestConditions = {
			sourcePeakV: logU(5, 20),
			sourceResistanceOhm: logU(100, 100e3),
			frequencyHz: logU(50, 1000)
		};
		const rs = c.sourceResistanceOhm;
		const w = 2 * Math.PI * c.frequencyHz;
		const diode: DeviceModel = {
			kind: 'diode',
			is: logU(1e-15, 1e-8),
			n: 1 + rnd(),
			rs: rnd() < 0.3 ? 0 : logU(0.1, 10),
			reversed: rnd() < 0.5,
			...(rnd() < 0.5 ? { bv: logU(2, 0.8 * c.sourcePeakV), ibv: logU(1e-5, 1e-2) } : {})
		};
		const r = () => ({ kind: 'resistor', ohms: rs * logU(0.2, 5) }) as const;
		const cap = () => ({ kind: 'capacitor', farads: 1 / (w * rs * logU(0.2, 5)) }) as const;
		const ind = () => ({ kind: 'inductor', henries: (rs * logU(0.2, 5)) / w }) as const;
		const shapes: [string, () => DeviceModel][] = [
			['resistor', r],
			['capacitor', cap],
			['inductor + R', () => ({ kind: 'series', parts: [ind(), { kind: 'resistor', ohms: rs * logU(0.02, 0.5) }] })],
			['diode', () => diode],
			['diode ‖ R', () => ({ kind: 'parallel', parts: [diode, r()] })],
			['R ‖ C', () => ({ kind: 'parallel', parts: [r(), cap()] })],
			['diode + R', () => ({ kind: 'series', parts: [diode, r()] })],
			['diode ‖ C', () => ({ kind: 'parallel', parts: [diode, cap()] })]
		];
		const [name, make] = shapes[Math.floor(rnd() * shapes.length)];
		out.push({ name: `random ${k}: ${name}`, model: make(), c });
	}
	return out;
}

const fmt = (c: TestConditions) =>
	`${c.sourcePeakV.toPrecision(3)} V, ${c.sourceResistanceOhm.toPrecision(3)} Ω, ${c.frequencyHz.toPrecision(3)} Hz`;

const labelled: { label: string; model: DeviceModel; c: TestConditions }[] = [
	...conditionSet.flatMap((c) => namedCircuits(c).map((x) => ({ label: `${x.name} at ${fmt(c)}`, model: x.model, c }))),
	...randomCases(16, 2026).map((x) => ({ label: `${x.name} at ${fmt(x.c)}`, model: x.model, c: x.c }))
];

describe('simulate agrees with ngspice', () => {
	let oracle: OracleResult[] = [];

	beforeAll(async () => {
		if (!findNgspice()) throw new Error(NGSPICE_INSTALL_HINT);
		const cases: OracleCase[] = labelled.map((x) => ({ model: x.model, conditions: x.c, periods: 12 }));
		oracle = await runNgspice(cases);
	}, 180_000);

	it('has ngspice to compare with', () => {
		expect(findNgspice(), NGSPICE_INSTALL_HINT).not.toBeNull();
	});

	it.each(labelled.map((x, k) => [x.label, k] as const))(
		'within 1 %% of full scale RMS: %s',
		(_label, k) => {
			const result = oracle[k];
			expect(result, 'ngspice produced no result').toBeDefined();
			expect(result.settling).toBeLessThan(SETTLED);
			const ours = simulate(labelled[k].model, labelled[k].c);
			expect(normalisedRms(ours, result.curve)).toBeLessThan(TOLERANCE);
		}
	);
});
