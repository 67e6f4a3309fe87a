/**
 * Simulator throughput: curves per second and output samples per second for typical device
 * models, each as a ratio to baselines measured in the same run:
 * - the closed-form phasor solution of the same circuit (linear models only): the least any
 *   method can cost, so the ratio says what solving in the time domain costs over it;
 * - one ngspice run of the same case from rest over 12 periods (when ngspice is installed): what
 *   getting the same curve from a general-purpose circuit simulator costs, process start included.
 */
import { simulate, type SimulationStats } from '../../src/lib/signature/simulate';
import type { DeviceModel, TestConditions } from '../../src/lib/signature/types';
import { findNgspice, runNgspice } from '../support/ngspice';

export const name = 'simulate';

const bench: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
const secondary: TestConditions = { sourcePeakV: 8.9, sourceResistanceOhm: 3300, frequencyHz: 60 };
// Small-signal silicon diode parameters recalled from memory.
const signal: DeviceModel = { kind: 'diode', is: 2.52e-9, n: 1.752, rs: 0.568 };

const cases: { label: string; model: DeviceModel; c: TestConditions }[] = [
	{ label: 'resistor 2.2 kΩ', model: { kind: 'resistor', ohms: 2200 }, c: bench },
	{ label: 'capacitor 1 µF', model: { kind: 'capacitor', farads: 1e-6 }, c: bench },
	{ label: 'capacitor 1000 µF (τ ≈ 200 T)', model: { kind: 'capacitor', farads: 1e-3 }, c: secondary },
	{
		label: 'inductor 1 H + 50 Ω',
		model: { kind: 'series', parts: [{ kind: 'inductor', henries: 1 }, { kind: 'resistor', ohms: 50 }] },
		c: bench
	},
	{
		label: 'R ‖ C 4.7 kΩ ‖ 470 nF',
		model: {
			kind: 'parallel',
			parts: [{ kind: 'resistor', ohms: 4700 }, { kind: 'capacitor', farads: 470e-9 }]
		},
		c: secondary
	},
	{ label: 'diode', model: signal, c: bench },
	{ label: 'zener 5.1 V', model: { kind: 'diode', is: 1e-14, rs: 5, bv: 5.1 }, c: bench },
	{
		label: 'diode ‖ 1 µF',
		model: { kind: 'parallel', parts: [signal, { kind: 'capacitor', farads: 1e-6 }] },
		c: bench
	},
	{
		label: 'input pin: 2 clamps, 100 Ω, 10 nF, 1 MΩ',
		model: {
			kind: 'series',
			parts: [
				{ kind: 'resistor', ohms: 100 },
				{
					kind: 'parallel',
					parts: [
						signal,
						{ ...signal, reversed: true } as DeviceModel,
						{ kind: 'capacitor', farads: 10e-9 },
						{ kind: 'resistor', ohms: 1e6 }
					]
				}
			]
		},
		c: bench
	}
];

type Complex = [number, number];

function impedance(m: DeviceModel, w: number): Complex | null {
	switch (m.kind) {
		case 'resistor':
			return [m.ohms, 0];
		case 'capacitor':
			return [0, -1 / (w * m.farads)];
		case 'inductor':
			return [0, w * m.henries];
		case 'series': {
			let re = 0;
			let im = 0;
			for (const p of m.parts) {
				const z = impedance(p, w);
				if (!z) return null;
				re += z[0];
				im += z[1];
			}
			return [re, im];
		}
		case 'parallel': {
			let re = 0;
			let im = 0;
			for (const p of m.parts) {
				const z = impedance(p, w);
				if (!z) return null;
				const d = z[0] * z[0] + z[1] * z[1];
				re += z[0] / d;
				im -= z[1] / d;
			}
			const d = re * re + im * im;
			return [re / d, -im / d];
		}
		default:
			return null;
	}
}

/** The closed-form steady state of a linear model on the canonical grid, or null if not linear. */
function phasor(m: DeviceModel, c: TestConditions, points: number): Float64Array | null {
	const z = impedance(m, 2 * Math.PI * c.frequencyHz);
	if (!z) return null;
	const dr = z[0] + c.sourceResistanceOhm;
	const d = dr * dr + z[1] * z[1];
	const hr = (z[0] * dr + z[1] * z[1]) / d;
	const hi = (z[1] * dr - z[0] * z[1]) / d;
	const out = new Float64Array(2 * points);
	for (let k = 0; k < points; k++) {
		const th = (2 * Math.PI * k) / points;
		const v = c.sourcePeakV * (hr * Math.sin(th) + hi * Math.cos(th));
		out[k] = v;
		out[points + k] = (c.sourcePeakV * Math.sin(th) - v) / c.sourceResistanceOhm;
	}
	return out;
}

/** Seconds per call of fn, repeated until at least `budget` seconds have passed. */
function timeIt(fn: () => void, budget = 0.3): number {
	fn();
	let calls = 0;
	const start = performance.now();
	let elapsed = 0;
	do {
		fn();
		calls++;
		elapsed = (performance.now() - start) / 1000;
	} while (elapsed < budget);
	return elapsed / calls;
}

const fmt = (x: number, digits = 3) => (x >= 100 ? x.toFixed(0) : x.toPrecision(digits));

export async function run(): Promise<void> {
	const points = 256;
	const hasNgspice = findNgspice() !== null;
	const rows: Record<string, string>[] = [];
	for (const { label, model, c } of cases) {
		const stats: SimulationStats = { periods: 0, steps: 0, newtonIterations: 0 };
		simulate(model, c, { stats });
		const ours = timeIt(() => simulate(model, c));
		const linear = phasor(model, c, points);
		const closed = linear ? timeIt(() => phasor(model, c, points)) : null;
		let ngspice: number | null = null;
		if (hasNgspice) {
			const start = performance.now();
			await runNgspice([{ model, conditions: c, periods: 12 }], { parallel: 1 });
			ngspice = (performance.now() - start) / 1000;
		}
		rows.push({
			model: label,
			'ms/curve': fmt(ours * 1e3),
			'curves/s': fmt(1 / ours),
			'samples/s': fmt(points / ours),
			periods: String(stats.periods),
			'steps/s': fmt(stats.steps / ours),
			'× phasor': closed ? fmt(ours / closed) : 'n/a (nonlinear)',
			'ngspice ms': ngspice === null ? 'not installed' : fmt(ngspice * 1e3),
			'ngspice ÷ ours': ngspice === null ? '—' : fmt(ngspice / ours)
		});
	}
	console.log(`${points}-point curves, periodic steady state; "× phasor" = our time ÷ closed-form time.`);
	console.table(rows);
}
