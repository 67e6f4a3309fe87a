/**
 * ngspice (Debian's package `ngspice`) as the oracle for the tester circuit.
 *
 * For each case it writes a netlist of the same circuit the simulator solves — a SIN source of
 * peak Vs at f, the source resistance Rs from the source to probe 1, the device from probe 1 to
 * probe 2 (node 0), diodes as SPICE `D` models with IS, N, RS, BV, IBV — runs `ngspice -b` with a
 * `.tran` over enough periods to reach steady state, and reads the last period back from `wrdata`,
 * resampled onto the canonical phase grid (point k at source phase 2πk/N from the source's upward
 * zero crossing) by linear interpolation in time. ngspice's own step is capped at T/2048, so the
 * interpolation error is of order (2π/2048)²/8 ≈ 1·10⁻⁶ of full scale.
 */
import { execFile, execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { toCanonical } from '../../src/lib/signature/curve';
import {
	CANONICAL_POINTS,
	type CanonicalCurve,
	type DeviceModel,
	type TestConditions
} from '../../src/lib/signature/types';

export const NGSPICE_INSTALL_HINT =
	'ngspice is not installed. Install it with `apt-get install -y ngspice` (Debian package ngspice).';

/** Path of the ngspice executable, or null when it is not installed. */
export function findNgspice(): string | null {
	try {
		const out = execFileSync('sh', ['-c', 'command -v ngspice'], { encoding: 'utf8' }).trim();
		return out === '' ? null : out;
	} catch {
		return null;
	}
}

/** Throws with the install hint when ngspice is missing; never lets a test skip silently. */
export function requireNgspice(): string {
	const path = findNgspice();
	if (!path) throw new Error(NGSPICE_INSTALL_HINT);
	return path;
}

export interface OracleCase {
	model: DeviceModel;
	conditions: TestConditions;
	/** Periods of transient before the one read back (default 12). */
	periods?: number;
}

export interface OracleResult {
	curve: CanonicalCurve;
	/**
	 * RMS difference between the last two periods in the normalised plane: how far ngspice itself
	 * still was from steady state.
	 */
	settling: number;
}

function num(x: number): string {
	return x.toPrecision(12);
}

/** SPICE elements for `model` between nodes a and b. */
function netlistOf(model: DeviceModel): string[] {
	const lines: string[] = [];
	const models: string[] = [];
	let nodeCount = 0;
	let elementCount = 0;
	const node = () => `n${++nodeCount}`;
	const id = () => ++elementCount;
	const place = (m: DeviceModel, a: string, b: string): void => {
		switch (m.kind) {
			case 'open':
				return;
			case 'short':
				lines.push(`V${id()} ${a} ${b} DC 0`);
				return;
			case 'resistor':
				lines.push(`R${id()} ${a} ${b} ${num(m.ohms)}`);
				return;
			case 'capacitor':
				lines.push(`C${id()} ${a} ${b} ${num(m.farads)}`);
				return;
			case 'inductor':
				lines.push(`L${id()} ${a} ${b} ${num(m.henries)}`);
				return;
			case 'diode': {
				const k = id();
				const [anode, cathode] = m.reversed ? [b, a] : [a, b];
				lines.push(`D${k} ${anode} ${cathode} DM${k}`);
				const params = [`IS=${num(m.is ?? 1e-14)}`, `N=${num(m.n ?? 1)}`];
				if (m.rs !== undefined && m.rs > 0) params.push(`RS=${num(m.rs)}`);
				if (m.bv !== undefined) params.push(`BV=${num(m.bv)}`, `IBV=${num(m.ibv ?? 1e-3)}`);
				models.push(`.model DM${k} D(${params.join(' ')})`);
				return;
			}
			case 'series': {
				let from = a;
				m.parts.forEach((part, idx) => {
					const to = idx === m.parts.length - 1 ? b : node();
					place(part, from, to);
					from = to;
				});
				return;
			}
			case 'parallel':
				for (const part of m.parts) place(part, a, b);
				return;
		}
	};
	place(model, 'p1', '0');
	return [...lines, ...models];
}

/** The netlist ngspice runs for one case, writing `v(src)` and `v(p1)` to `outFile`. */
export function writeNetlist(c: OracleCase, outFile: string): string {
	const { sourcePeakV: vs, sourceResistanceOhm: rs, frequencyHz: f } = c.conditions;
	const periods = c.periods ?? 12;
	const period = 1 / f;
	const tmax = period / 2048;
	return [
		'tester circuit',
		`VSRC src 0 SIN(0 ${num(vs)} ${num(f)} 0 0 0)`,
		`RSRC src p1 ${num(rs)}`,
		...netlistOf(c.model),
		'.options reltol=1e-5 abstol=1e-15 vntol=1e-9',
		// Start the transient from rest, like switching the tester on; keep only the last two periods.
		`.tran ${num(tmax)} ${num(periods * period)} ${num((periods - 2.05) * period)} ${num(tmax)} uic`,
		'.control',
		'set wr_singlescale',
		'run',
		`wrdata ${outFile} v(src) v(p1)`,
		// Without an explicit quit, `ngspice -b` exits with status 1 after a .control run.
		'quit 0',
		'.endc',
		'.end',
		''
	].join('\n');
}

function interpolate(t: Float64Array, y: Float64Array, at: number, hint: { j: number }): number {
	let j = hint.j;
	while (j + 1 < t.length - 1 && t[j + 1] < at) j++;
	while (j > 0 && t[j] > at) j--;
	hint.j = j;
	const t0 = t[j];
	const t1 = t[j + 1];
	const w = t1 === t0 ? 0 : (at - t0) / (t1 - t0);
	return y[j] + w * (y[j + 1] - y[j]);
}

function readPeriod(
	t: Float64Array,
	src: Float64Array,
	p1: Float64Array,
	start: number,
	period: number,
	points: number,
	rs: number
): { v: Float64Array; i: Float64Array } {
	const v = new Float64Array(points);
	const i = new Float64Array(points);
	const hint = { j: 0 };
	for (let k = 0; k < points; k++) {
		const at = start + (k * period) / points;
		const e = interpolate(t, src, at, hint);
		const vk = interpolate(t, p1, at, hint);
		v[k] = vk;
		i[k] = (e - vk) / rs;
	}
	return { v, i };
}

function runOne(exe: string, dir: string, index: number, c: OracleCase, points: number) {
	const netFile = join(dir, `case${index}.cir`);
	const outFile = join(dir, `case${index}.txt`);
	writeFileSync(netFile, writeNetlist(c, outFile));
	return new Promise<OracleResult>((resolve, reject) => {
		execFile(exe, ['-b', netFile], { timeout: 120_000 }, (err, stdout, stderr) => {
			if (err) {
				reject(new Error(`ngspice failed on case ${index}: ${err.message}\n${stdout}\n${stderr}`));
				return;
			}
			try {
				resolve(readResult(outFile, c, points));
			} catch (e) {
				reject(new Error(`ngspice output of case ${index} unreadable: ${(e as Error).message}\n${stdout}`));
			}
		});
	});
}

function readResult(outFile: string, c: OracleCase, points: number): OracleResult {
	const rows = readFileSync(outFile, 'utf8')
		.split('\n')
		.map((l) => l.trim())
		.filter((l) => l !== '')
		.map((l) => l.split(/\s+/).map(Number));
	// With wr_singlescale the columns are: time, v(src), v(p1).
	const t = Float64Array.from(rows, (r) => r[0]);
	const src = Float64Array.from(rows, (r) => r[1]);
	const p1 = Float64Array.from(rows, (r) => r[2]);
	if (rows.length < 100 || rows.some((r) => r.length < 3 || r.some((x) => !Number.isFinite(x)))) {
		throw new Error(`expected ≥ 100 rows of 3 numbers, got ${rows.length}`);
	}
	const { sourcePeakV: vs, sourceResistanceOhm: rs, frequencyHz: f } = c.conditions;
	const periods = c.periods ?? 12;
	const period = 1 / f;
	const last = readPeriod(t, src, p1, (periods - 1) * period, period, points, rs);
	const before = readPeriod(t, src, p1, (periods - 2) * period, period, points, rs);
	const isc = vs / rs;
	let sum = 0;
	for (let k = 0; k < points; k++) {
		sum += ((last.v[k] - before.v[k]) / vs) ** 2 + ((last.i[k] - before.i[k]) / isc) ** 2;
	}
	return {
		curve: toCanonical(last.v, last.i, c.conditions, {
			periods: 0,
			periodSpread: null,
			simulated: true
		}),
		settling: Math.sqrt(sum / points)
	};
}

/**
 * Runs every case through ngspice, `parallel` processes at a time, and returns the canonical
 * curves in order. Throws with the install hint when ngspice is missing.
 */
export async function runNgspice(
	cases: OracleCase[],
	options: { points?: number; parallel?: number } = {}
): Promise<OracleResult[]> {
	const exe = requireNgspice();
	const points = options.points ?? CANONICAL_POINTS;
	const parallel = options.parallel ?? 2;
	const dir = mkdtempSync(join(tmpdir(), 'tester-oracle-'));
	try {
		const results: OracleResult[] = new Array(cases.length);
		let next = 0;
		const worker = async () => {
			while (next < cases.length) {
				const index = next++;
				results[index] = await runOne(exe, dir, index, cases[index], points);
			}
		};
		await Promise.all(Array.from({ length: Math.min(parallel, cases.length) }, worker));
		return results;
	} finally {
		rmSync(dir, { recursive: true, force: true });
	}
}

/** RMS distance between two curves on the same grid in the normalised plane (full scale = 1). */
export function normalisedRms(a: CanonicalCurve, b: CanonicalCurve): number {
	if (a.vn.length !== b.vn.length) throw new Error('curves on different grids');
	let sum = 0;
	for (let k = 0; k < a.vn.length; k++) {
		sum += (a.vn[k] - b.vn[k]) ** 2 + (a.in[k] - b.in[k]) ** 2;
	}
	return Math.sqrt(sum / a.vn.length);
}
