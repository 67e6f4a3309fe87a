import { describe, expect, it } from 'vitest';
import { formatSI } from '../signature/format';
import {
	axisPrefix,
	closeCurve,
	extent,
	fullScale,
	panRange,
	plotSummary,
	tickLabels,
	ticks,
	tickStep,
	zoomRange,
	type Range
} from './plot-scale';

describe('fullScale', () => {
	// DESIGN.md: full scale is ±Vs horizontally and ±Vs/Rs vertically; Ohm's law for the current.
	it('is ±Vs by ±Vs/Rs', () => {
		const s = fullScale({ sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 });
		expect(s.v).toEqual([-10, 10]);
		expect(s.i[0]).toBeCloseTo(-0.01, 15);
		expect(s.i[1]).toBeCloseTo(0.01, 15);
	});

	it('gives 2.7 mA for 2.7 V through 1 kΩ', () => {
		const s = fullScale({ sourcePeakV: 2.7, sourceResistanceOhm: 1000, frequencyHz: 1000 });
		expect(s.i[1]).toBeCloseTo(2.7e-3, 15);
	});
});

describe('ticks', () => {
	// Steps of 1, 2 and 5 × 10ⁿ are common practice for chart axes, no source.
	const cases: [Range, number][] = [
		[[-10, 10], 9],
		[[-0.01, 0.01], 9],
		[[-2.7e-3, 2.7e-3], 7],
		[[-0.2, 0.2], 5],
		[[-3.3, 3.3], 11],
		[[-1e-6, 1e-6], 6],
		[[0.13, 0.97], 8],
		[[-20, 20], 3]
	];

	it.each(cases)('for %j with at most %d ticks: on a 1-2-5 step, inside, covering, zero included', (range, max) => {
		const t = ticks(range, max);
		const step = tickStep(range, max);
		const mantissa = Number((step / 10 ** Math.floor(Math.log10(step))).toPrecision(6));
		expect([1, 2, 5]).toContain(mantissa);
		expect(t.length).toBeLessThanOrEqual(max);
		expect(t.length).toBeGreaterThanOrEqual(2);
		for (const x of t) {
			expect(x).toBeGreaterThanOrEqual(range[0] - step * 1e-9);
			expect(x).toBeLessThanOrEqual(range[1] + step * 1e-9);
		}
		// Covering: no gap at either end wider than one step.
		expect(t[0] - range[0]).toBeLessThan(step + step * 1e-9);
		expect(range[1] - t[t.length - 1]).toBeLessThan(step + step * 1e-9);
		if (range[0] < 0 && range[1] > 0) expect(t).toContain(0);
		for (let k = 1; k < t.length; k++) expect(t[k] - t[k - 1]).toBeCloseTo(step, 12);
	});

	it('gives the expected ticks for the 10 V full scale', () => {
		expect(ticks([-10, 10], 9)).toEqual([-10, -5, 0, 5, 10]);
		expect(ticks([-10, 10], 11)).toEqual([-10, -8, -6, -4, -2, 0, 2, 4, 6, 8, 10]);
	});

	it('lands exactly on decimal multiples (no 0.30000000000000004)', () => {
		expect(ticks([0, 0.6], 7)).toEqual([0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6]);
	});

	it('copes with an empty range', () => {
		expect(ticks([1, 1], 5)).toEqual([1]);
	});
});

describe('tick labels', () => {
	// SI prefixes in steps of 10³ (BIPM SI Brochure, table 7).
	it('writes milliamperes, not fractions of an ampere', () => {
		expect(tickLabels([-0.01, -0.005, 0, 0.005, 0.01], 'A')).toEqual(['-10 mA', '-5 mA', '0', '5 mA', '10 mA']);
	});

	it('uses one prefix per axis, with decimals only where the step needs them', () => {
		expect(tickLabels([-0.002, -0.001, 0, 0.001, 0.002], 'A')).toEqual(['-2 mA', '-1 mA', '0', '1 mA', '2 mA']);
		expect(tickLabels([-0.001, -0.0005, 0, 0.0005, 0.001], 'A')).toEqual([
			'-1.0 mA', '-0.5 mA', '0', '0.5 mA', '1.0 mA'
		]);
		expect(tickLabels([0.6, 0.65, 0.7], 'V')).toEqual(['600 mV', '650 mV', '700 mV']);
	});

	it('writes volts for the voltage axis', () => {
		expect(tickLabels([-10, -5, 0, 5, 10], 'V')).toEqual(['-10 V', '-5 V', '0', '5 V', '10 V']);
		expect(tickLabels([-20e-6, 0, 20e-6], 'A')).toEqual(['-20 µA', '0', '20 µA']);
	});

	it('agrees with formatSI on the prefix of the largest tick', () => {
		for (const maxAbs of [2.7e-3, 10, 0.65, 4.7e-7, 1500]) {
			const { prefix } = axisPrefix(maxAbs);
			expect(formatSI(maxAbs, 'A').endsWith(` ${prefix}A`)).toBe(true);
		}
	});
});

describe('zoom and pan', () => {
	const limit: Range = [-10, 10];

	it('halves the range about its centre', () => {
		expect(zoomRange([-10, 10], 0.5, limit)).toEqual([-5, 5]);
		expect(zoomRange([0, 4], 0.5, limit)).toEqual([1, 3]);
	});

	it('zooms about a given point, keeping it where it was', () => {
		const [a, b] = zoomRange([-10, 10], 0.5, limit, 6);
		expect((6 - a) / (b - a)).toBeCloseTo((6 + 10) / 20, 12);
	});

	it('never zooms out past full scale and slides back inside it', () => {
		expect(zoomRange([-5, 5], 4, limit)).toEqual(limit);
		expect(zoomRange([4, 10], 2, limit)).toEqual([-2, 10]);
	});

	it('pans by a fraction of the view and stops at the edge', () => {
		expect(panRange([-5, 5], 0.25, limit)).toEqual([-2.5, 7.5]);
		expect(panRange([2, 8], 1, limit)).toEqual([4, 10]);
		expect(panRange([-10, 10], -0.5, limit)).toEqual(limit);
	});
});

describe('closeCurve', () => {
	it('repeats the first point so a period draws as a loop', () => {
		expect(closeCurve([0, 1, 0, -1], [1, 0, -1, 0])).toEqual([
			[0, 1, 0, -1, 0],
			[1, 0, -1, 0, 1]
		]);
	});

	it('leaves an already closed curve alone', () => {
		expect(closeCurve([0, 1, 0], [0, 1, 0])).toEqual([
			[0, 1, 0],
			[0, 1, 0]
		]);
	});

	it('drops points with a non-finite coordinate', () => {
		expect(closeCurve([0, NaN, 2], [0, 1, Infinity])).toEqual([[0], [0]]);
	});
});

describe('extent', () => {
	it('finds the finite minimum and maximum', () => {
		expect(extent([3, -2, NaN, 7])).toEqual([-2, 7]);
		expect(extent([])).toBeNull();
	});
});

describe('plotSummary', () => {
	it('names the conditions, full scale and each curve with its extents', () => {
		// A 1 kΩ resistor at 10 V through 1 kΩ: half the source across it, so ±5 V and ±5 mA (Ohm's law).
		const v = [0, 5, 0, -5];
		const i = [0, 0.005, 0, -0.005];
		expect(
			plotSummary([{ label: 'R7', role: 'known-good', v, i }], {
				sourcePeakV: 10,
				sourceResistanceOhm: 1000,
				frequencyHz: 60
			})
		).toEqual([
			'V-I plot at 10 V · 1 kΩ · 60 Hz; full scale ±10 V and ±10 mA.',
			'Known-good, R7: voltage -5 V to 5 V, current -5 mA to 5 mA.'
		]);
	});

	it('says so when there is nothing to plot', () => {
		expect(plotSummary([], { sourcePeakV: 5, sourceResistanceOhm: 100, frequencyHz: 50 })[1]).toBe('No curves.');
	});
});
