/**
 * The whole engine against captures it did not simulate itself: ngspice (Debian's `ngspice`)
 * solves the tester circuit, the result is written out as bench-like files (random start phase,
 * a non-whole number of periods, noise of 0.5–1.5 % of full scale, quantisation, every file
 * format), and the pipeline parse → canonicalise → analyse → compare must recover what went in.
 * Thresholds are the product's targets: class ≥ 98 %, R within 2 %, C and L within 5 %, knee
 * within 50 mV, breakdown within 3 %, the right library curve first ≥ 95 % and in the top five,
 * and the app's match index (descriptor scan + settled re-rank) agreeing with the exact scan.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { analyseCapture } from '../../src/lib/signature/index';
import { compare, descriptor, descriptorTail } from '../../src/lib/signature/compare';
import { simulate } from '../../src/lib/signature/simulate';
import { DescriptorIndex } from '../../src/lib/server/match/descriptor-index';
import { candidatesFor } from '../../src/lib/server/match/registry';
import { compareUntilSettled } from '../../src/lib/server/match/rerank';
import { KNEE_CURRENT_FRACTION } from '../../src/lib/signature/analyse';
import type { CanonicalCurve, DeviceModel, SignatureClass, TestConditions } from '../../src/lib/signature/types';
import { logUniform, pick, randomStyle, seededRandom, synthesiseSamples, uniform, writeCapture } from '../support/captures';
import { withNoise } from '../support/analytic';
import { type OracleCase, runNgspice } from '../support/ngspice';

const rng = seededRandom(20261201);

// Diode parameters recalled from memory (typical published SPICE models, not copied from any
// datasheet): a small-signal silicon diode, a 1 A rectifier, an ideal-ish junction.
const DIODES = [
	{ is: 2.5e-9, n: 1.75, rs: 0.6 },
	{ is: 14e-9, n: 1.98, rs: 0.03 },
	{ is: 1e-14, n: 1, rs: 1 }
];

interface Case extends OracleCase {
	kind: SignatureClass;
	truth: { resistanceOhm?: number; capacitanceF?: number; inductanceH?: number; bv?: number };
}

function conditions(): TestConditions {
	return {
		sourcePeakV: pick(rng, [5, 10, 12, 20]),
		sourceResistanceOhm: pick(rng, [100, 470, 1000, 3300, 10_000, 100_000]),
		frequencyHz: pick(rng, [50, 60, 120, 400, 1000])
	};
}

function makeCase(kind: SignatureClass): Case {
	const c = conditions();
	const rs = c.sourceResistanceOhm;
	const w = 2 * Math.PI * c.frequencyHz;
	switch (kind) {
		case 'open':
			return { kind, conditions: c, model: { kind: 'resistor', ohms: rs * 1e5 }, truth: {} };
		case 'short':
			return { kind, conditions: c, model: { kind: 'resistor', ohms: rs * 1e-4 }, truth: {} };
		case 'resistive': {
			const ohms = rs * logUniform(rng, 0.1, 10);
			return { kind, conditions: c, model: { kind: 'resistor', ohms }, truth: { resistanceOhm: ohms } };
		}
		case 'capacitive': {
			// Reactance Xc = 1/(2πfC) between Rs/4 and 4·Rs: a clear ellipse (textbook reactance).
			const farads = 1 / (w * rs * logUniform(rng, 0.25, 4));
			return { kind, conditions: c, model: { kind: 'capacitor', farads }, truth: { capacitanceF: farads } };
		}
		case 'inductive': {
			const henries = (rs * logUniform(rng, 0.25, 4)) / w; // XL = 2πfL
			const model: DeviceModel = { kind: 'series', parts: [{ kind: 'inductor', henries }, { kind: 'resistor', ohms: rs * 0.01 }] };
			return { kind, conditions: c, model, periods: 40, truth: { inductanceH: henries } };
		}
		case 'junction': {
			const d = pick(rng, DIODES);
			return { kind, conditions: c, model: { kind: 'diode', ...d, reversed: rng() < 0.3 }, truth: {} };
		}
		default: {
			const bv = uniform(rng, 3, 0.6 * c.sourcePeakV);
			return { kind: 'zener', conditions: c, model: { kind: 'diode', is: 1e-12, n: 1.1, rs: 1, bv, ibv: 1e-3 }, truth: { bv } };
		}
	}
}

/** |V| where the clean curve's current first reaches the knee fraction of full scale on one branch. */
function kneeOf(curve: CanonicalCurve, sign: 1 | -1): number {
	const level = KNEE_CURRENT_FRACTION;
	let best = Infinity;
	const n = curve.in.length;
	for (let k = 0; k < n; k++) {
		const a = sign * curve.in[k];
		const b = sign * curve.in[(k + 1) % n];
		if (a < level && b >= level) {
			const v = curve.v[k] + ((level - a) / (b - a)) * (curve.v[(k + 1) % n] - curve.v[k]);
			best = Math.min(best, Math.abs(v));
		}
	}
	return best;
}

/** Noise, length and sampling of a bench capture; kept to at most ~16 000 samples so the suite stays quick. */
function benchLike() {
	return {
		noise: uniform(rng, 0.005, 0.015),
		periods: uniform(rng, 1.3, 8),
		samplesPerPeriod: Math.round(logUniform(rng, 64, 2000))
	};
}

function value(p: unknown): number {
	return p && typeof p === 'object' && 'value' in p && typeof p.value === 'number' ? p.value : NaN;
}

const KINDS: SignatureClass[] = ['open', 'short', 'resistive', 'capacitive', 'inductive', 'junction', 'zener'];
const PER_KIND = 7;
const cases: Case[] = KINDS.flatMap((k) => Array.from({ length: PER_KIND }, () => makeCase(k)));
let truths: CanonicalCurve[] = [];

beforeAll(async () => {
	truths = (await runNgspice(cases, { points: 4096, parallel: 2 })).map((r) => r.curve);
}, 240_000);

describe('engine on ngspice captures it has never seen', () => {
	it('detects the format, the class and the parameters within the targets', () => {
		const misses: string[] = [];
		let classOk = 0;
		for (const [k, c] of cases.entries()) {
			const style = randomStyle(rng);
			const samples = synthesiseSamples(truths[k], { rng, ...benchLike() });
			const file = writeCapture(samples, style);
			const { capture, analysis } = analyseCapture(file.text, c.conditions, file.parseOptions);
			expect(capture.format, `format of case ${k}`).toBe(style.format);
			const p = analysis.parameters;
			const where = `${c.kind} #${k} at ${JSON.stringify(c.conditions)} → ${analysis.summary}`;
			if (analysis.class === c.kind) classOk++;
			else misses.push(where);
			if (c.truth.resistanceOhm) expect(Math.abs(value(p.resistanceOhm) / c.truth.resistanceOhm - 1), where).toBeLessThan(0.02);
			if (c.truth.capacitanceF) expect(Math.abs(value(p.capacitanceF) / c.truth.capacitanceF - 1), where).toBeLessThan(0.05);
			if (c.truth.inductanceH) expect(Math.abs(value(p.inductanceH) / c.truth.inductanceH - 1), where).toBeLessThan(0.05);
			if (c.kind === 'junction') {
				const reversed = c.model.kind === 'diode' && c.model.reversed;
				expect(Math.abs(value(p.kneeV) - kneeOf(truths[k], reversed ? -1 : 1)), where).toBeLessThan(0.05);
			}
			if (c.kind === 'zener') {
				expect(Math.abs(value(p.breakdownV) / kneeOf(truths[k], -1) - 1), where).toBeLessThan(0.03);
			}
		}
		expect(misses, misses.join('\n')).toHaveLength(0);
		expect(classOk / cases.length).toBeGreaterThanOrEqual(0.98);
	}, 120_000);
});

describe('ranking against a library of ngspice curves with near neighbours', () => {
	const c: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
	const models: [string, DeviceModel][] = [
		...[470, 1000, 1500, 2200, 2700, 3300, 4700].map((ohms): [string, DeviceModel] => [`R ${ohms}`, { kind: 'resistor', ohms }]),
		...[0.22e-6, 0.47e-6, 1e-6, 2.2e-6].map((farads): [string, DeviceModel] => [`C ${farads}`, { kind: 'capacitor', farads }]),
		['1 µF ‖ 4.7 kΩ', { kind: 'parallel', parts: [{ kind: 'capacitor', farads: 1e-6 }, { kind: 'resistor', ohms: 4700 }] }],
		['diode', { kind: 'diode', ...DIODES[0] }],
		['diode ‖ 1 kΩ', { kind: 'parallel', parts: [{ kind: 'diode', ...DIODES[0] }, { kind: 'resistor', ohms: 1000 }] }],
		['zener 5.1 V', { kind: 'diode', is: 1e-12, n: 1.1, rs: 1, bv: 5.1, ibv: 1e-3 }],
		['zener 6.2 V', { kind: 'diode', is: 1e-12, n: 1.1, rs: 1, bv: 6.2, ibv: 1e-3 }]
	];
	let library: CanonicalCurve[] = [];
	let dense: CanonicalCurve[] = [];

	beforeAll(async () => {
		dense = (await runNgspice(models.map(([, model]) => ({ model, conditions: c })), { points: 4096 })).map((r) => r.curve);
		library = dense.map((curve) => analyseCapture(JSON.stringify({ v: curve.v, i: curve.i }), c).curve);
	}, 120_000);

	it('puts the right entry first and always in the top five, and orders 2.2 kΩ/2.7 kΩ and 0.47 µF/1 µF correctly', () => {
		let first = 0;
		let queries = 0;
		for (let rep = 0; rep < 3; rep++) {
			for (const [k] of models.entries()) {
				const samples = synthesiseSamples(dense[k], { rng, ...benchLike() });
				const file = writeCapture(samples, randomStyle(rng));
				const query = analyseCapture(file.text, c, file.parseOptions).curve;
				const ranked = library.map((curve, j) => ({ j, d: compare(query, curve).distance })).sort((a, b) => a.d - b.d);
				const position = ranked.findIndex((r) => r.j === k);
				expect(position, `${models[k][0]} ranked ${position + 1}`).toBeLessThan(5);
				if (position === 0) first++;
				queries++;
				const name = models[k][0];
				const neighbour = { 'R 2200': 'R 2700', 'R 2700': 'R 2200', 'C 4.7e-7': 'C 0.000001', 'C 0.000001': 'C 4.7e-7' }[name];
				if (neighbour) {
					const n = models.findIndex(([m]) => m === neighbour);
					expect(ranked.findIndex((r) => r.j === k), `${name} before ${neighbour}`).toBeLessThan(ranked.findIndex((r) => r.j === n));
				}
			}
		}
		expect(first / queries).toBeGreaterThanOrEqual(0.95);
	}, 120_000);

	// The app does not compare a capture with every stored curve: it scans descriptors and re-ranks
	// candidates until the top is settled (DescriptorIndex + compareUntilSettled, as rankTraces
	// does). On ngspice captures, among thousands of stored curves of the same kinds of part, that
	// must give what the exact scan over every curve gives.
	it('ranks through the match index as the exact scan does, in a library padded with 3 000 near neighbours', async () => {
		const pad = seededRandom(7);
		const distractors: CanonicalCurve[] = [];
		for (let n = 0; n < 3000; n++) {
			const kind = n % 4;
			const model: DeviceModel =
				kind === 0
					? { kind: 'resistor', ohms: logUniform(pad, 300, 6000) }
					: kind === 1
						? { kind: 'capacitor', farads: logUniform(pad, 0.15e-6, 3e-6) }
						: kind === 2
							? { kind: 'parallel', parts: [{ kind: 'capacitor', farads: logUniform(pad, 0.3e-6, 3e-6) }, { kind: 'resistor', ohms: logUniform(pad, 1000, 20_000) }] }
							: { kind: 'diode', is: logUniform(pad, 1e-13, 1e-8), n: uniform(pad, 1, 2), rs: uniform(pad, 0.1, 2), ...(pad() < 0.5 ? { bv: uniform(pad, 4, 8), ibv: 1e-3 } : {}) };
			distractors.push(withNoise(simulate(model, c), 0.005, pad));
		}
		const all = [...library, ...distractors];
		const index = new DescriptorIndex<number>();
		all.forEach((curve, j) => {
			const d = descriptor(curve);
			index.upsert({ traceId: `t${j}`, conditions: curve.conditions, data: j }, d, descriptorTail(curve, d));
		});
		let agreeFirst = 0;
		let found = 0;
		let queries = 0;
		for (const [k] of models.entries()) {
			for (let rep = 0; rep < 2; rep++) {
				const samples = synthesiseSamples(dense[k], { rng, ...benchLike() });
				const file = writeCapture(samples, randomStyle(rng));
				const query = analyseCapture(file.text, c, file.parseOptions).curve;
				const exact = all
					.map((curve, j) => ({ j, d: compare(query, curve).distance }))
					.sort((a, b) => a.d - b.d)
					.slice(0, 5)
					.map((r) => r.j);
				const pool = index.search(descriptor(query), query.conditions, { candidates: candidatesFor(index.size, 5), enough: 5 });
				const ranked = (await compareUntilSettled(pool, 5, (p) => p.descriptorDistance, (batch) => batch.map((p) => compare(query, all[p.meta.data]).distance)))
					.sort((a, b) => a.distance - b.distance)
					.slice(0, 5)
					.map((r) => r.candidate.meta.data);
				if (ranked[0] === exact[0]) agreeFirst++;
				found += exact.filter((j) => ranked.includes(j)).length;
				queries++;
			}
		}
		expect(agreeFirst / queries).toBeGreaterThanOrEqual(0.99);
		expect(found / (5 * queries)).toBeGreaterThanOrEqual(0.99);
	}, 120_000);
});
