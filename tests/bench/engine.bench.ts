/**
 * Analysis and shape-distance throughput, with ratios against baselines measured in the same run:
 * - one exact shape distance (point to point over the circular shift search) is the baseline for
 *   the distance rows, so the descriptor row says how many times faster a descriptor comparison is;
 * - one pass of a single DFT bin over the curve (the least any analysis of it must read) is the
 *   baseline for `analyse`, so its ratio says what classifying and fitting cost over touching the
 *   data once.
 * The last table measures how well the descriptor distance tracks the exact one on a mixed library.
 */
import { analyse } from '../../src/lib/signature/analyse';
import { descriptor, descriptorDistance, shapeDistance, DESCRIPTOR_LENGTH } from '../../src/lib/signature/compare';
import { simulate } from '../../src/lib/signature/simulate';
import type { CanonicalCurve, DeviceModel, TestConditions } from '../../src/lib/signature/types';
import { linearCurve, withNoise } from '../support/analytic';
import { seededRandom, logUniform } from '../support/captures';

export const name = 'engine';

const bench: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

/** Runs fn repeatedly for about `ms` milliseconds after a warm-up; returns calls per second. */
function rate(fn: () => void, ms = 400): number {
	for (let k = 0; k < 20; k++) fn();
	let calls = 0;
	const start = performance.now();
	let now = start;
	while (now - start < ms) {
		for (let k = 0; k < 10; k++) fn();
		calls += 10;
		now = performance.now();
	}
	return (calls * 1000) / (now - start);
}

function fmt(x: number): string {
	if (x >= 1e6) return `${(x / 1e6).toFixed(2)} M`;
	if (x >= 1e3) return `${(x / 1e3).toFixed(1)} k`;
	return x.toFixed(1);
}

export async function run(): Promise<void> {
	const rng = seededRandom(1);
	const models: [string, DeviceModel][] = [
		['resistor 2.2 kΩ', { kind: 'resistor', ohms: 2200 }],
		['capacitor 1 µF', { kind: 'capacitor', farads: 1e-6 }],
		['inductor 1 H + 50 Ω', { kind: 'series', parts: [{ kind: 'inductor', henries: 1 }, { kind: 'resistor', ohms: 50 }] }],
		['diode', { kind: 'diode' }],
		['zener 5.1 V', { kind: 'diode', bv: 5.1 }],
		['diode ‖ 1 µF', { kind: 'parallel', parts: [{ kind: 'diode' }, { kind: 'capacitor', farads: 1e-6 }] }]
	];
	const curves = models.map(([label, m]) => ({ label, curve: withNoise(simulate(m, bench), 0.005, rng) }));
	const n = curves[0].curve.vn.length;

	// Baseline for analyse: one DFT bin over both axes.
	const cosT = Float64Array.from({ length: n }, (_, k) => Math.cos((2 * Math.PI * k) / n));
	const sinT = Float64Array.from({ length: n }, (_, k) => Math.sin((2 * Math.PI * k) / n));
	let sink = 0;
	const c0 = curves[0].curve;
	const dftRate = rate(() => {
		let re = 0;
		let im = 0;
		for (let k = 0; k < n; k++) {
			re += c0.vn[k] * cosT[k] + c0.in[k] * sinT[k];
			im += c0.vn[k] * sinT[k] - c0.in[k] * cosT[k];
		}
		sink += re + im;
	});

	const rows: Record<string, string>[] = [];
	rows.push({
		operation: 'baseline: one DFT bin, both axes',
		'per second': fmt(dftRate),
		'samples/s': fmt(dftRate * n * 2),
		ratio: '1.00'
	});
	for (const { label, curve } of curves) {
		const r = rate(() => {
			sink += analyse(curve).residual;
		});
		rows.push({
			operation: `analyse: ${label}`,
			'per second': fmt(r),
			'samples/s': fmt(r * n * 2),
			ratio: `${(dftRate / r).toFixed(0)}× slower`
		});
	}

	const a = curves[0].curve;
	const b = curves[1].curve;
	const exactRate = rate(() => {
		sink += shapeDistance(a, b);
	});
	const da = descriptor(a);
	const db = descriptor(b);
	const descRate = rate(() => {
		sink += descriptorDistance(da, db);
	});
	const makeRate = rate(() => {
		sink += descriptor(a)[0];
	});
	rows.push({
		operation: 'exact shape distance (baseline)',
		'per second': fmt(exactRate),
		'samples/s': fmt(exactRate * n * 4),
		ratio: '1.00'
	});
	rows.push({
		operation: `descriptor distance (${DESCRIPTOR_LENGTH} numbers)`,
		'per second': fmt(descRate),
		'samples/s': fmt(descRate * DESCRIPTOR_LENGTH * 2),
		ratio: `${(descRate / exactRate).toFixed(1)}× faster`
	});
	rows.push({
		operation: 'descriptor of one curve',
		'per second': fmt(makeRate),
		'samples/s': fmt(makeRate * n * 2),
		ratio: `${(exactRate / makeRate).toFixed(2)}× an exact distance`
	});
	console.table(rows);

	// How closely the descriptor tracks the exact distance, on a mixed library.
	const library: CanonicalCurve[] = [];
	for (let k = 0; k < 400; k++) {
		const kind = k % 4;
		const w = 2 * Math.PI * bench.frequencyHz;
		library.push(
			kind === 0
				? withNoise(linearCurve({ kind: 'resistor', ohms: logUniform(rng, 100, 10e3) }, bench), 0.005, rng)
				: kind === 1
					? withNoise(linearCurve({ kind: 'capacitor', farads: 1 / (w * logUniform(rng, 100, 10e3)) }, bench), 0.005, rng)
					: kind === 2
						? withNoise(simulate({ kind: 'diode', is: logUniform(rng, 1e-15, 1e-9), n: 1 + rng() }, bench), 0.005, rng)
						: withNoise(simulate({ kind: 'diode', bv: logUniform(rng, 3, 8) }, bench), 0.005, rng)
		);
	}
	const descs = library.map(descriptor);
	let ratioSum = 0;
	let ratioMin = Infinity;
	let ratioMax = 0;
	let pairs = 0;
	let recall = 0;
	let recallTotal = 0;
	for (let q = 0; q < 40; q++) {
		const query = library[q * 10];
		const exact = library.map((c, idx) => ({ idx, d: shapeDistance(query, c) }));
		const approx = descs.map((d, idx) => ({ idx, d: descriptorDistance(descs[q * 10], d) }));
		for (let k = 0; k < library.length; k++) {
			if (exact[k].d <= 0) continue;
			const r = approx[k].d / exact[k].d;
			ratioSum += r;
			ratioMin = Math.min(ratioMin, r);
			ratioMax = Math.max(ratioMax, r);
			pairs++;
		}
		const top = [...exact].sort((x, y) => x.d - y.d).slice(0, 10).map((x) => x.idx);
		const shortlist = [...approx]
			.sort((x, y) => x.d - y.d)
			.slice(0, 50)
			.map((x) => exact[x.idx])
			.sort((x, y) => x.d - y.d)
			.slice(0, 10)
			.map((x) => x.idx);
		recall += top.filter((idx) => shortlist.includes(idx)).length;
		recallTotal += top.length;
	}
	console.table([
		{
			measure: 'descriptor distance / exact distance',
			mean: (ratioSum / pairs).toFixed(3),
			min: ratioMin.toFixed(3),
			max: ratioMax.toFixed(3)
		},
		{
			measure: 'recall@10 after re-ranking the 50 nearest descriptors',
			mean: (recall / recallTotal).toFixed(3),
			min: '',
			max: ''
		}
	]);
	if (Number.isNaN(sink)) console.log('');
}
