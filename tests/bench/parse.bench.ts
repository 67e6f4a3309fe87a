/**
 * Import and canonical-form throughput on a 100 000-sample capture, in each file format, with the
 * ratio to a baseline measured in the same run: `JSON.parse` of the same sample values written as
 * one JSON array of numbers (the least any reader of that much text must do).
 */
import { canonicalise } from '../../src/lib/signature/canonical';
import { parseCapture } from '../../src/lib/signature/parse';
import { simulate } from '../../src/lib/signature/simulate';
import type { TestConditions } from '../../src/lib/signature/types';
import { seededRandom, synthesiseSamples, writeCapture, type CaptureStyle } from '../support/captures';

export const name = 'parse';

const SAMPLES = 100_000;

/** Median milliseconds of `runs` calls after a warm-up. */
function timeMs(fn: () => void, runs = 15): number {
	for (let k = 0; k < 3; k++) fn();
	const t: number[] = [];
	for (let k = 0; k < runs; k++) {
		const start = performance.now();
		fn();
		t.push(performance.now() - start);
	}
	t.sort((a, b) => a - b);
	return t[t.length >> 1];
}

function rate(samples: number, ms: number): string {
	return `${((samples / ms) * 1e3 / 1e6).toFixed(2)} M`;
}

export async function run(): Promise<void> {
	const c: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
	const curve = simulate({ kind: 'diode', bv: 5.1 }, c, { points: 4096 });
	const rng = seededRandom(100);
	// 100 000 samples: 9.7 periods of 10 309 samples, started at a random phase.
	const samples = synthesiseSamples(curve, { rng, noise: 0.01, samplesPerPeriod: 10_309, periods: SAMPLES / 10_309 });
	const n = samples.v.length;

	const styles: [string, CaptureStyle][] = [
		[
			'vi-csv, comma, header with units',
			{ format: 'vi-csv', delimiter: ',', header: 'parens', voltageUnit: 'V', currentUnit: 'mA', withTime: false, currentFirst: false, crlf: false, bom: false, comments: false, decimalComma: false }
		],
		[
			'vi-csv, semicolon, decimal commas, CRLF',
			{ format: 'vi-csv', delimiter: ';', header: 'brackets', voltageUnit: 'mV', currentUnit: 'uA', withTime: false, currentFirst: false, crlf: true, bom: true, comments: true, decimalComma: true }
		],
		[
			'scope-csv, preamble, time + 2 channels',
			{ format: 'scope-csv', delimiter: ',', senseOhm: 10, senseInPreamble: true, intervalOnly: false, swapped: false, millivolts: false, timeUnit: 's', crlf: false, bom: false, decimalComma: false }
		],
		['json {"t","v","i"}', { format: 'json', variant: 'tvi', senseOhm: 10, pretty: false }]
	];

	// Baseline: JSON.parse of the same values as one array (two numbers per sample, like a V-I file).
	const values: number[] = [];
	for (let k = 0; k < n; k++) values.push(Number(samples.v[k].toPrecision(7)), Number(samples.i[k].toPrecision(7)));
	const baselineText = JSON.stringify(values);
	let sink = 0;
	const baseMs = timeMs(() => {
		sink += (JSON.parse(baselineText) as number[]).length;
	});

	const rows: Record<string, string>[] = [
		{
			operation: `baseline: JSON.parse of ${2 * n} numbers`,
			bytes: `${(baselineText.length / 1e6).toFixed(2)} MB`,
			ms: baseMs.toFixed(1),
			'samples/s': rate(n, baseMs),
			ratio: '1.00'
		}
	];
	for (const [label, style] of styles) {
		const file = writeCapture(samples, style);
		const parseMs = timeMs(() => {
			sink += parseCapture(file.text, file.parseOptions).count;
		});
		const parsed = parseCapture(file.text, file.parseOptions);
		const canonMs = timeMs(() => {
			sink += canonicalise(parsed.samples, c).periods;
		});
		const bothMs = timeMs(() => {
			sink += canonicalise(parseCapture(file.text, file.parseOptions).samples, c).periods;
		});
		rows.push({
			operation: `parse: ${label}`,
			bytes: `${(file.text.length / 1e6).toFixed(2)} MB`,
			ms: parseMs.toFixed(1),
			'samples/s': rate(n, parseMs),
			ratio: `${(parseMs / baseMs).toFixed(2)}× baseline`
		});
		rows.push({
			operation: `canonicalise (${parsed.samples.t ? 'time column' : 'no time column'})`,
			bytes: '',
			ms: canonMs.toFixed(1),
			'samples/s': rate(n, canonMs),
			ratio: `${(canonMs / baseMs).toFixed(2)}× baseline`
		});
		rows.push({
			operation: 'parse + canonicalise',
			bytes: '',
			ms: bothMs.toFixed(1),
			'samples/s': rate(n, bothMs),
			ratio: `${(bothMs / baseMs).toFixed(2)}× baseline`
		});
	}
	console.table(rows);
	if (sink === -1) console.log(sink);
}
