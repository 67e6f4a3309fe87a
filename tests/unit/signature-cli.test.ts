/**
 * The `signature` command line, run as a separate process on temporary files: JSON on stdout,
 * one line on stderr and exit status 2 on errors.
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { simulate } from '../../src/lib/signature/simulate';
import type { DeviceModel, TestConditions } from '../../src/lib/signature/types';
import { randomStyle, seededRandom, synthesiseCapture } from '../support/captures';

const root = resolve(__dirname, '../..');
const tsx = join(root, 'node_modules/tsx/dist/cli.mjs');
let dir: string;

interface Run {
	code: number | null;
	stdout: string;
	stderr: string;
}

/** Runs the CLI as its own process; several run at once to keep the suite short. */
function run(...args: string[]): Promise<Run> {
	return new Promise((done, fail) => {
		const child = spawn(process.execPath, [tsx, 'scripts/signature.ts', ...args], { cwd: root });
		let stdout = '';
		let stderr = '';
		child.stdout.setEncoding('utf8').on('data', (d: string) => (stdout += d));
		child.stderr.setEncoding('utf8').on('data', (d: string) => (stderr += d));
		child.on('error', fail);
		child.on('close', (code) => done({ code, stdout, stderr }));
	});
}

function json(r: Run): any {
	expect(r.stderr, r.stderr).toBe('');
	expect(r.code).toBe(0);
	return JSON.parse(r.stdout);
}

function expectFailure(r: Run, pattern: RegExp): void {
	expect(r.code).toBe(2);
	expect(r.stdout).toBe('');
	expect(r.stderr.trim().split('\n')).toHaveLength(1);
	expect(r.stderr).toMatch(pattern);
}

const c: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
const args = ['--vs', '10', '--rs', '1k', '--f', '60'];
const resistor = (ohms: number): DeviceModel => ({ kind: 'resistor', ohms });

beforeAll(() => {
	dir = mkdtempSync(join(tmpdir(), 'signature-cli-'));
	const rng = seededRandom(2024);
	const write = (name: string, model: DeviceModel, conditions: TestConditions, format: 'vi-csv' | 'scope-csv' | 'json') => {
		const style = randomStyle(rng, format);
		if (style.format === 'scope-csv') {
			// The sense resistance is given on the command line or in the library.
			style.senseInPreamble = false;
			style.senseOhm = 10;
			style.swapped = false;
		}
		const cap = synthesiseCapture(simulate(model, conditions, { points: 2048 }), {
			rng,
			style,
			noise: 0.01,
			periods: 4.4,
			samplesPerPeriod: 500
		});
		writeFileSync(join(dir, name), cap.text);
	};
	write('r2k2.csv', resistor(2200), c, 'vi-csv');
	write('r2k2-again.json', resistor(2200), c, 'json');
	write('r2k7.csv', resistor(2700), c, 'scope-csv');
	write('r1k5.json', resistor(1500), c, 'json');
	write('c1u.csv', { kind: 'capacitor', farads: 1e-6 }, c, 'vi-csv');
	write('d.csv', { kind: 'diode' }, c, 'vi-csv');
	write('r2k2-100k.csv', resistor(2200), { ...c, sourceResistanceOhm: 100e3 }, 'vi-csv');
	writeFileSync(
		join(dir, 'scope-no-sense.csv'),
		['Record length,64', 'Time (s),CH1 (V),CH2 (V)', ...Array.from({ length: 64 }, (_, k) => `${k * 1e-4},${Math.sin(k / 3)},${Math.cos(k / 3)}`)].join('\n')
	);
	writeFileSync(join(dir, 'model.json'), JSON.stringify(resistor(2200)));
	writeFileSync(
		join(dir, 'lib.jsonl'),
		[
			{ id: 'r1k5', path: 'r1k5.json', vs: 10, rs: 1000, f: 60 },
			{ id: 'cap', path: 'c1u.csv', vs: 10, rs: 1000, f: 60 },
			{ id: 'r2k2-at-100k', path: 'r2k2-100k.csv', vs: 10, rs: 100000, f: 60 },
			{ id: 'r2k7', path: 'r2k7.csv', vs: 10, rs: 1000, f: 60, senseOhm: 10 },
			{ id: 'diode', path: 'd.csv', vs: 10, rs: 1000, f: 60 },
			{ id: 'r2k2', path: 'r2k2-again.json', vs: 10, rs: 1000, f: 60 }
		]
			.map((e) => JSON.stringify(e))
			.join('\n')
	);
}, 60_000);

afterAll(() => {
	if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('signature CLI', () => {
	it('analyze prints the class, parameters and canonical curve', async () => {
		const out = json(await run('analyze', join(dir, 'r2k2.csv'), ...args));
		expect(out.format).toBe('vi-csv');
		expect(out.samples).toBe(2201);
		expect(out.periods).toBe(4);
		expect(out.class).toBe('resistive');
		expect(out.confidence).toBeGreaterThan(0);
		// Ohm's law: the resistor's own value, within the 2 % target.
		expect(Math.abs(out.parameters.resistanceOhm.value / 2200 - 1)).toBeLessThan(0.02);
		expect(out.parameters.resistanceOhm.unit).toBe('Ω');
		expect(typeof out.residual).toBe('number');
		expect(Array.isArray(out.warnings)).toBe(true);
		expect(out.canonical.vn).toHaveLength(256);
		expect(out.canonical.conditions).toEqual(c);
	}, 60_000);

	it('analyze refuses a scope export without a sense resistance, and reads it with one', async () => {
		const [without, withSense] = await Promise.all([
			run('analyze', join(dir, 'scope-no-sense.csv'), ...args),
			run('analyze', join(dir, 'r2k7.csv'), ...args, '--sense-ohm', '10')
		]);
		expectFailure(without, /sense resistance/);
		const out = json(withSense);
		expect(out.format).toBe('scope-csv');
		expect(Math.abs(out.parameters.resistanceOhm.value / 2700 - 1)).toBeLessThan(0.02);
	}, 60_000);

	it('simulate prints a canonical curve, or CSV that analyze reads back', async () => {
		const [sim, csv] = await Promise.all([
			run('simulate', '--model', join(dir, 'model.json'), ...args),
			run('simulate', '--model', join(dir, 'model.json'), ...args, '--csv', '--points', '512')
		]);
		const out = json(sim);
		expect(out.simulated).toBe(true);
		expect(out.v).toHaveLength(256);
		// Voltage divider: the peak across 2.2 kΩ from 10 V behind 1 kΩ is 10·2200/3200 V, at 90°.
		expect(out.v[64]).toBeCloseTo((10 * 2200) / 3200, 6);
		expect(csv.code).toBe(0);
		const lines = csv.stdout.trim().split('\n');
		expect(lines).toHaveLength(513);
		expect(lines[0]).toBe('phase_deg,voltage_V,current_A');
		writeFileSync(join(dir, 'sim.csv'), csv.stdout);
		const back = json(await run('analyze', join(dir, 'sim.csv'), ...args));
		expect(back.class).toBe('resistive');
		expect(back.parameters.resistanceOhm.value).toBeCloseTo(2200, 0);
	}, 60_000);

	it('compare tells the same part from a near neighbour and flags other conditions', async () => {
		const runs = await Promise.all([
			run('compare', join(dir, 'r2k2.csv'), join(dir, 'r2k2-again.json'), ...args),
			run('compare', join(dir, 'r2k2.csv'), join(dir, 'r1k5.json'), ...args),
			run('compare', join(dir, 'r2k2.csv'), join(dir, 'r2k2-100k.csv'), ...args, '--b-rs', '100k')
		]);
		const [same, near, other] = runs.map(json);
		expect(same.comparable).toBe(true);
		expect(same.distance).toBeLessThan(near.distance);
		expect(same.similarity).toBeGreaterThan(near.similarity);
		expect(other.comparable).toBe(false);
	}, 60_000);

	it('rank lists the library best first, comparable conditions before the rest', async () => {
		const out = json(await run('rank', join(dir, 'r2k2.csv'), ...args, '--library', join(dir, 'lib.jsonl')));
		expect(out.map((r: { id: string }) => r.id).slice(0, 2)).toEqual(['r2k2', 'r2k7']);
		expect(out).toHaveLength(6);
		expect(out[out.length - 1]).toMatchObject({ id: 'r2k2-at-100k', comparable: false });
		for (let k = 1; k < 5; k++) expect(out[k].distance).toBeGreaterThanOrEqual(out[k - 1].distance);
		for (const r of out) expect(Object.keys(r).sort()).toEqual(['comparable', 'distance', 'id', 'similarity']);
	}, 60_000);

	it('prints help, and fails with one line and exit 2 on bad usage', async () => {
		const [help, noRs, bogus, tooHigh] = await Promise.all([
			run('--help'),
			run('analyze', join(dir, 'r2k2.csv'), '--vs', '10', '--f', '60'),
			run('analyze', join(dir, 'missing.csv'), ...args, '--bogus'),
			run('analyze', join(dir, 'r2k2.csv'), '--vs', '500', '--rs', '1k', '--f', '60')
		]);
		expect(help.code).toBe(0);
		expect(help.stdout).toMatch(/Usage: npm run --silent signature/);
		expectFailure(noRs, /--rs/);
		expectFailure(bogus, /Unknown option/);
		expectFailure(tooHigh, /at most 100 V/);
	}, 120_000);
});
