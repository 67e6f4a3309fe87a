/**
 * Accuracy of the whole engine on synthesised bench captures: seeded random parts and test
 * conditions across the ranges, simulated at periodic steady state, sampled like a bench (random
 * start phase, a non-whole number of periods, odd sample counts, 1 % white noise per channel,
 * 12-bit quantisation), written in a random file format and style, then parsed, canonicalised and
 * analysed. Each test asserts one rate against the engine's targets; the population is built once.
 *
 * The references are outside the engine: Ohm's law for resistors, Xc = 1/(2πfC) and XL = 2πfL
 * (the parts' own values), Shockley's diode equation for the knee and the SPICE breakdown law for
 * the zener (see `expectedKneeV`, `expectedBreakdownV`).
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { analyseCapture } from '../../src/lib/signature/index';
import { compare, conditionsComparable, shapeDistance } from '../../src/lib/signature/compare';
import { KNEE_CURRENT_FRACTION } from '../../src/lib/signature/analyse';
import { simulate } from '../../src/lib/signature/simulate';
import type {
	Analysis,
	CanonicalCurve,
	DeviceModel,
	Parameter,
	SignatureClass,
	TestConditions
} from '../../src/lib/signature/types';
import { logUniform, pick, seededRandom, synthesiseCapture, uniform } from '../support/captures';
import type { Rng } from '../support/captures';

/** Thermal voltage kT/q at 300 K (k, q exact in the 2019 SI). */
const VT = (1.380649e-23 * 300) / 1.602176634e-19;

type Truth =
	| { param: 'resistanceOhm' | 'capacitanceF' | 'inductanceH'; value: number; tolerance: number }
	| { param: 'kneeV'; value: number; tolerance: number }
	| { param: 'breakdownV'; value: number; tolerance: number };

interface Trial {
	expected: SignatureClass;
	model: DeviceModel;
	conditions: TestConditions;
	truth?: Truth;
}

/** Bench-like sampling, kept to a few thousand samples a capture so the suite stays quick. */
function capture(curve: CanonicalCurve, rng: Rng) {
	return synthesiseCapture(curve, {
		rng,
		samplesPerPeriod: Math.round(logUniform(rng, 50, 1000)),
		periods: uniform(rng, 1.3, 8)
	});
}

function analyseBench(model: DeviceModel, c: TestConditions, rng: Rng): { analysis: Analysis; curve: CanonicalCurve } {
	const cap = capture(simulate(model, c, { points: 4096 }), rng);
	const result = analyseCapture(cap.text, c, cap.parseOptions);
	return { analysis: result.analysis, curve: result.curve };
}

function randomConditions(rng: Rng, vs: [number, number]): TestConditions {
	return {
		sourcePeakV: logUniform(rng, vs[0], vs[1]),
		sourceResistanceOhm: logUniform(rng, 100, 100e3),
		frequencyHz: logUniform(rng, 20, 2000)
	};
}

/** Shockley's equation with series resistance at the knee current: V = n·Vt·ln(1 + I/Is) + I·rs. */
function expectedKneeV(d: { is: number; n: number; rs: number }, c: TestConditions): number {
	const current = (KNEE_CURRENT_FRACTION * c.sourcePeakV) / c.sourceResistanceOhm;
	return d.n * VT * Math.log(1 + current / d.is) + current * d.rs;
}

/**
 * SPICE's breakdown law: reverse current Ibv·exp((|V| − Bv)/(n·Vt)), so at the knee current the
 * reverse voltage is Bv + n·Vt·ln(I/Ibv) (plus I·rs, zero here).
 */
function expectedBreakdownV(bv: number, ibv: number, n: number, c: TestConditions): number {
	const current = (KNEE_CURRENT_FRACTION * c.sourcePeakV) / c.sourceResistanceOhm;
	return bv + n * VT * Math.log(current / ibv);
}

/** One random trial of each kind, across the ranges. */
const makers: Record<Exclude<SignatureClass, 'complex'>, (rng: Rng) => Trial> = {
	// Resistors within a decade either side of Rs: beyond that the tester's resolution, not the
	// engine, limits the reading (the divider ratio's slope dh/dR vanishes).
	resistive: (rng) => {
		const c = randomConditions(rng, [0.5, 50]);
		const ohms = c.sourceResistanceOhm * logUniform(rng, 0.1, 10);
		return {
			expected: 'resistive',
			model: { kind: 'resistor', ohms },
			conditions: c,
			truth: { param: 'resistanceOhm', value: ohms, tolerance: 0.02 }
		};
	},
	capacitive: (rng) => {
		const c = randomConditions(rng, [0.5, 50]);
		const w = 2 * Math.PI * c.frequencyHz;
		const farads = 1 / (w * c.sourceResistanceOhm * logUniform(rng, 0.1, 10));
		return {
			expected: 'capacitive',
			model: { kind: 'capacitor', farads },
			conditions: c,
			truth: { param: 'capacitanceF', value: farads, tolerance: 0.05 }
		};
	},
	inductive: (rng) => {
		const c = randomConditions(rng, [0.5, 50]);
		const w = 2 * Math.PI * c.frequencyHz;
		const henries = (c.sourceResistanceOhm * logUniform(rng, 0.2, 10)) / w;
		const winding = w * henries * logUniform(rng, 0.01, 0.3);
		return {
			expected: 'inductive',
			model: {
				kind: 'series',
				parts: [
					{ kind: 'inductor', henries },
					{ kind: 'resistor', ohms: winding }
				]
			},
			conditions: c,
			truth: { param: 'inductanceH', value: henries, tolerance: 0.05 }
		};
	},
	junction: (rng) => {
		const c = randomConditions(rng, [2, 20]);
		const d = {
			is: logUniform(rng, 1e-15, 1e-9),
			n: uniform(rng, 1, 2),
			rs: uniform(rng, 0, 0.03) * c.sourceResistanceOhm
		};
		return {
			expected: 'junction',
			model: { kind: 'diode', ...d, reversed: rng() < 0.5 },
			conditions: c,
			truth: { param: 'kneeV', value: expectedKneeV(d, c), tolerance: 0.05 }
		};
	},
	zener: (rng) => {
		const c = randomConditions(rng, [5, 30]);
		const bv = uniform(rng, 3.3, 0.7 * c.sourcePeakV);
		return {
			expected: 'zener',
			model: { kind: 'diode', bv, ibv: 1e-3, reversed: rng() < 0.5 },
			conditions: c,
			truth: { param: 'breakdownV', value: expectedBreakdownV(bv, 1e-3, 1, c), tolerance: 0.03 }
		};
	},
	open: (rng) => {
		const c = randomConditions(rng, [0.5, 50]);
		return {
			expected: 'open',
			model:
				rng() < 0.5
					? { kind: 'resistor', ohms: c.sourceResistanceOhm * logUniform(rng, 2000, 1e5) }
					: { kind: 'open' },
			conditions: c
		};
	},
	short: (rng) => {
		const c = randomConditions(rng, [0.5, 50]);
		const w = 2 * Math.PI * c.frequencyHz;
		const ratio = logUniform(rng, 1e-5, 5e-4);
		return {
			expected: 'short',
			model:
				rng() < 0.5
					? { kind: 'resistor', ohms: c.sourceResistanceOhm * ratio }
					: { kind: 'capacitor', farads: 1 / (w * c.sourceResistanceOhm * ratio) },
			conditions: c
		};
	}
};

/** `counts[kind]` trials of each kind, interleaved. */
function makeTrials(rng: Rng, counts: Record<keyof typeof makers, number>): Trial[] {
	const trials: Trial[] = [];
	const kinds = Object.keys(makers) as (keyof typeof makers)[];
	const most = Math.max(...kinds.map((k) => counts[k]));
	for (let k = 0; k < most; k++) {
		for (const kind of kinds) if (k < counts[kind]) trials.push(makers[kind](rng));
	}
	return trials;
}

function measured(p: Parameter | undefined): number | undefined {
	return p && 'value' in p && typeof p.value === 'number' ? p.value : undefined;
}

describe('engine accuracy on synthesised bench captures', () => {
	const results: { trial: Trial; analysis: Analysis }[] = [];

	beforeAll(() => {
		const rng = seededRandom(20261201);
		const counts = { resistive: 30, capacitive: 30, inductive: 30, junction: 60, zener: 60, open: 20, short: 20 };
		for (const trial of makeTrials(rng, counts)) {
			results.push({ trial, analysis: analyseBench(trial.model, trial.conditions, rng).analysis });
		}
	}, 120_000);

	it('classifies ≥ 98 % of captures right', () => {
		const wrong = results.filter((r) => r.analysis.class !== r.trial.expected);
		const rate = 1 - wrong.length / results.length;
		console.info(`class accuracy ${(rate * 100).toFixed(1)} % of ${results.length}`);
		expect(rate, JSON.stringify(wrong.slice(0, 3).map((r) => [r.trial, r.analysis.summary]))).toBeGreaterThanOrEqual(0.98);
	});

	it.each([
		['resistanceOhm', 'resistance within 2 %'],
		['capacitanceF', 'capacitance within 5 %'],
		['inductanceH', 'inductance within 5 %'],
		['kneeV', 'knee within 50 mV'],
		['breakdownV', 'breakdown within 3 %']
	] as const)('measures %s: %s in ≥ 95 % of captures', (param, description) => {
		const relevant = results.filter((r) => r.trial.truth?.param === param);
		expect(relevant.length).toBeGreaterThan(10);
		let good = 0;
		for (const { trial, analysis } of relevant) {
			const truth = trial.truth!;
			const got = measured(analysis.parameters[param]);
			if (got === undefined) continue;
			const error = param === 'kneeV' ? Math.abs(got - truth.value) : Math.abs(got / truth.value - 1);
			if (error <= truth.tolerance) good++;
		}
		const rate = good / relevant.length;
		console.info(`${description}: ${(rate * 100).toFixed(1)} % of ${relevant.length}`);
		expect(rate).toBeGreaterThanOrEqual(0.95);
	});
});

/** E12 preferred values (IEC 60063). */
const E12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];

function e12Between(lo: number, hi: number): number[] {
	const out: number[] = [];
	for (let decade = Math.floor(Math.log10(lo)); decade <= Math.ceil(Math.log10(hi)); decade++) {
		for (const m of E12) {
			const v = m * 10 ** decade;
			if (v >= lo && v <= hi) out.push(v);
		}
	}
	return out;
}

interface LibraryEntry {
	id: string;
	/** Index of this part among its family's values, for "near neighbour" checks. */
	family: string;
	rank: number;
	model: DeviceModel;
	curve: CanonicalCurve;
}

describe('ranking a capture against a library of known-good curves', () => {
	const library: LibraryEntry[] = [];
	const queries: { entry: LibraryEntry; curve: CanonicalCurve }[] = [];

	beforeAll(() => {
		const rng = seededRandom(4242);
		const settings: TestConditions[] = [
			{ sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 },
			{ sourcePeakV: 5, sourceResistanceOhm: 10e3, frequencyHz: 1000 },
			{ sourcePeakV: 20, sourceResistanceOhm: 100, frequencyHz: 50 }
		];
		for (const c of settings) {
			const rs = c.sourceResistanceOhm;
			const w = 2 * Math.PI * c.frequencyHz;
			const add = (family: string, rank: number, model: DeviceModel) =>
				library.push({ id: `${family}#${rank}@${rs}`, family: `${family}@${rs}`, rank, model, curve: simulate(model, c) });
			e12Between(0.1 * rs, 10 * rs).forEach((ohms, k) => add('R', k, { kind: 'resistor', ohms }));
			e12Between(1 / (w * rs * 10), 1 / (w * rs * 0.1)).forEach((farads, k) => add('C', k, { kind: 'capacitor', farads }));
			[3.3, 3.9, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1, 10, 12].forEach((bv, k) => {
				if (bv < 0.8 * c.sourcePeakV) add('Z', k, { kind: 'diode', bv });
			});
			[1e-15, 1e-13, 1e-11, 1e-9].forEach((is, k) => add('D', k, { kind: 'diode', is }));
			add('open', 0, { kind: 'open' });
			add('short', 0, { kind: 'short' });
		}
		for (let q = 0; q < 90; q++) {
			const entry = pick(rng, library);
			const cap = capture(simulate(entry.model, entry.curve.conditions, { points: 4096 }), rng);
			queries.push({ entry, curve: analyseCapture(cap.text, entry.curve.conditions, cap.parseOptions).curve });
		}
	}, 120_000);

	function ranked(query: CanonicalCurve): LibraryEntry[] {
		return library
			.filter((e) => conditionsComparable(e.curve.conditions, query.conditions))
			.map((e) => ({ e, d: shapeDistance(query, e.curve) }))
			.sort((a, b) => a.d - b.d)
			.map((x) => x.e);
	}

	it('ranks the right curve first ≥ 95 % of the time and in the top five ≥ 99 %', () => {
		let first = 0;
		let top5 = 0;
		for (const { entry, curve } of queries) {
			const order = ranked(curve);
			const at = order.findIndex((e) => e.id === entry.id);
			if (at === 0) first++;
			if (at >= 0 && at < 5) top5++;
		}
		console.info(
			`ranking: first ${((first / queries.length) * 100).toFixed(1)} %, top five ${((top5 / queries.length) * 100).toFixed(1)} % of ${queries.length}`
		);
		expect(first / queries.length).toBeGreaterThanOrEqual(0.95);
		expect(top5 / queries.length).toBeGreaterThanOrEqual(0.99);
	});

	it('puts the clean curve nearer than its nearest neighbour in value, and scores it higher', () => {
		let ordered = 0;
		let counted = 0;
		for (const { entry, curve } of queries) {
			const neighbours = library.filter((e) => e.family === entry.family && Math.abs(e.rank - entry.rank) === 1);
			if (neighbours.length === 0) continue;
			counted++;
			const own = compare(curve, entry.curve);
			if (neighbours.every((nb) => compare(curve, nb.curve).similarity < own.similarity)) ordered++;
		}
		console.info(`near neighbours ordered ${((ordered / counted) * 100).toFixed(1)} % of ${counted}`);
		expect(ordered / counted).toBeGreaterThanOrEqual(0.95);
	});
});
