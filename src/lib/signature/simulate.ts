/**
 * The tester circuit at periodic steady state: a sine source e(t) = Vs·sin(2πft), the source
 * resistance Rs, and the device (a series/parallel network of resistors, capacitors, inductors and
 * diodes) between probe 1 and probe 2 (the reference node).
 *
 * Method
 * - The DeviceModel tree is flattened into a netlist: a series chain gets internal nodes, a short
 *   merges its two nodes (union–find), an open adds nothing, a diode with series resistance gets an
 *   internal node between the resistance and the junction. The source and Rs enter as their Norton
 *   equivalent (conductance 1/Rs from probe 1 to the reference, current e/Rs into probe 1).
 * - Modified nodal analysis: node voltages plus one branch current per inductor.
 * - Time integration: BDF2 (the second-order backward differentiation formula) with a fixed step of
 *   one period / Nint, Nint a whole multiple of the requested points so every output sample is a
 *   time step (no interpolation). BDF2 rather than the trapezoidal rule because it is L-stable: a
 *   capacitor across a conducting diode is a time constant far below the step, where the
 *   trapezoidal rule rings at the Nyquist rate without damping and BDF2 damps it. Its error is
 *   second order like the trapezoidal rule's; at Nint ≥ 2048 the phase error of a reactance is
 *   (ωh)²/3 ≈ 3·10⁻⁶. Memoryless networks (no C, no L) have no time discretisation at all and use
 *   Nint = points.
 * - Diodes: Shockley junction I = Is·(exp(V/(n·Vt)) − 1) at 27 °C (300.15 K, as SPICE's default
 *   nominal temperature; Vt = k·T/q ≈ 25.864 mV), a series resistance, and optional reverse
 *   breakdown modelled as a second exponential −Ibv·(exp(−(V + Bv)/(n·Vt)) − exp(−Bv/(n·Vt))),
 *   which carries exactly Ibv at V = −Bv, grows e-fold every n·Vt beyond it and is zero at V = 0.
 *   It uses the forward emission coefficient n. A conductance GMIN = 1 pS sits across every
 *   junction (as in SPICE) and 1 fS from every internal node to the reference so no node floats.
 * - Each time step is solved by Newton–Raphson with SPICE-style junction voltage limiting
 *   (pnjlim) on the forward and the breakdown exponential, until the junction voltages the
 *   equations were linearised at agree with the solution's (or the linearised junction currents
 *   with the true ones). Ill-conditioned steps fall back to a KCL residual test with a rounding
 *   floor, and a step that will not solve is approached by shunt (gmin) stepping.
 * - Periodic steady state by shooting: the state after one period, P(z), of z = (the capacitor
 *   voltages and inductor currents at the last two steps, as BDF2 needs), is found with Newton's
 *   method on P(z) − z = 0. The monodromy matrix ∂P/∂z is propagated exactly alongside the
 *   integration from each step's factored Jacobian (for a linear network, once, by repeated
 *   squaring). A linear network converges in one Newton step whatever its time constants
 *   (1000 µF behind 3.3 kΩ at 60 Hz decays over ≈ 200 periods, here it costs three), a diode
 *   network in a few; steps that do not reduce the residual are halved, and a plain period of
 *   transient is the last resort. Newton starts from rest, not from the phasor solution: for
 *   linear networks shooting is exact from any start, so a phasor start would only save work for
 *   diode networks, where it is not a better guess than rest.
 * - Convergence: the state residual is below STATE_TOLERANCE (capacitor volts in units of Vs,
 *   inductor amperes in units of Vs/Rs), and then one more period is simulated and must agree with
 *   the previous one within PERIOD_AGREEMENT of full scale at every sample. When Newton has
 *   stalled twice (a capacitor charged through a diode and discharged only by leakage changes too
 *   slowly for the state residual to resolve), that agreement of two successive periods alone
 *   decides. The returned curve is the last period. After MAX_PERIODS periods the simulation
 *   gives up with SignatureError('no_convergence').
 */
import { z } from 'zod';
import { testConditions } from './conditions';
import { toCanonical } from './curve';
import { SignatureError } from './errors';
import { CANONICAL_POINTS, type CanonicalCurve, type DeviceModel, type TestConditions } from './types';

/** Boltzmann constant, J/K, and elementary charge, C (exact since the 2019 SI). */
const BOLTZMANN = 1.380649e-23;
const ELEMENTARY_CHARGE = 1.602176634e-19;
/** Junction temperature: 27 °C, SPICE's default nominal temperature. */
export const JUNCTION_TEMPERATURE_K = 300.15;
/** Thermal voltage k·T/q at JUNCTION_TEMPERATURE_K, ≈ 25.864 mV. */
export const THERMAL_VOLTAGE = (BOLTZMANN * JUNCTION_TEMPERATURE_K) / ELEMENTARY_CHARGE;

/** Defaults of the diode parameters (the usual SPICE defaults). */
export const DIODE_DEFAULTS = { is: 1e-14, n: 1, rs: 0, ibv: 1e-3 } as const;

/** Conductance across every junction, S (SPICE's GMIN). */
const GMIN = 1e-12;
/**
 * Conductance from every internal node to the reference, S: keeps a node between two capacitors
 * or behind an open from floating, yet is 10⁴ times smaller than the largest resistor allowed.
 * Probe 1 needs none: Rs ties it to the source.
 */
const GMIN_NODE = 1e-15;
/** Internal steps per period for networks with memory, at least. */
const MIN_STEPS_PER_PERIOD = 2048;
/** Shooting has converged when no state moves more than this over a period (full-scale units). */
const STATE_TOLERANCE = 1e-8;
/** Two successive periods agree when no sample differs by more than this fraction of full scale. */
export const PERIOD_AGREEMENT = 1e-6;
/** Periods simulated at most before giving up. */
const MAX_PERIODS = 120;
/** Newton iterations per time step at most. */
const MAX_STEP_ITERATIONS = 200;
/** Newton iterations of a step after which a solution satisfying KCL is accepted (see kclHolds). */
const KCL_FALLBACK_AFTER = 20;
/** Largest exponent evaluated; beyond it the exponential continues linearly (avoids overflow). */
const MAX_EXPONENT = 80;

export const MAX_POINTS = 1 << 17;
export const MIN_POINTS = 8;

// ---------------------------------------------------------------------------------------------
// The device model schema
// ---------------------------------------------------------------------------------------------

/** Limits of the values a device model may hold. */
export const MODEL_LIMITS = {
	ohms: { min: 1e-3, max: 1e11 },
	farads: { min: 1e-15, max: 10 },
	henries: { min: 1e-9, max: 1e3 },
	is: { min: 1e-20, max: 1e-2 },
	n: { min: 0.5, max: 10 },
	rs: { min: 0, max: 1e6 },
	bv: { min: 0.1, max: 1e4 },
	ibv: { min: 1e-12, max: 10 },
	/** Parts in one series or parallel list. */
	partsPerList: 32,
	/** Leaves (parts that are not series or parallel) in the whole model. */
	leaves: 64,
	/** Nesting depth of series/parallel lists. */
	depth: 8
} as const;

function bounded(what: string, unit: string, limits: { min: number; max: number }) {
	const range = `between ${limits.min} and ${limits.max} ${unit}`.trimEnd();
	return z
		.number({ error: `${what} must be a number (${range}).` })
		.min(limits.min, `${what} must be ${range}.`)
		.max(limits.max, `${what} must be ${range}.`);
}

const diodeSchema = z
	.object({
		kind: z.literal('diode'),
		is: bounded('Saturation current is', 'A', MODEL_LIMITS.is).optional(),
		n: bounded('Emission coefficient n', '', MODEL_LIMITS.n).optional(),
		rs: bounded('Series resistance rs', 'Ω', MODEL_LIMITS.rs).optional(),
		bv: bounded('Breakdown voltage bv', 'V', MODEL_LIMITS.bv).optional(),
		ibv: bounded('Breakdown current ibv', 'A', MODEL_LIMITS.ibv).optional(),
		reversed: z.boolean({ error: 'reversed must be true or false.' }).optional()
	})
	.strict();

const KINDS = [
	'open',
	'short',
	'resistor',
	'capacitor',
	'inductor',
	'diode',
	'series',
	'parallel'
] as const;

/** zod schema of a DeviceModel. Use `parseModel`, which also enforces the size and depth limits. */
export const deviceModel: z.ZodType<DeviceModel> = z.lazy(() =>
	z.discriminatedUnion(
		'kind',
		[
			z.object({ kind: z.literal('open') }).strict(),
			z.object({ kind: z.literal('short') }).strict(),
			z
				.object({
					kind: z.literal('resistor'),
					ohms: bounded('Resistance ohms', 'Ω', MODEL_LIMITS.ohms)
				})
				.strict(),
			z
				.object({
					kind: z.literal('capacitor'),
					farads: bounded('Capacitance farads', 'F', MODEL_LIMITS.farads)
				})
				.strict(),
			z
				.object({
					kind: z.literal('inductor'),
					henries: bounded('Inductance henries', 'H', MODEL_LIMITS.henries)
				})
				.strict(),
			diodeSchema,
			z
				.object({
					kind: z.literal('series'),
					parts: z
						.array(deviceModel, { error: 'parts must be a list of parts.' })
						.min(1, 'A series list needs at least one part.')
						.max(MODEL_LIMITS.partsPerList, `A list holds at most ${MODEL_LIMITS.partsPerList} parts.`)
				})
				.strict(),
			z
				.object({
					kind: z.literal('parallel'),
					parts: z
						.array(deviceModel, { error: 'parts must be a list of parts.' })
						.min(1, 'A parallel list needs at least one part.')
						.max(MODEL_LIMITS.partsPerList, `A list holds at most ${MODEL_LIMITS.partsPerList} parts.`)
				})
				.strict()
		],
		{ error: `Each part needs a kind: one of ${KINDS.join(', ')}.` }
	)
);

function pathText(path: readonly PropertyKey[]): string {
	let out = '';
	for (const key of path) {
		if (typeof key === 'number') out += `[${key}]`;
		else out += out === '' ? String(key) : `.${String(key)}`;
	}
	return out;
}

/** Walks raw JSON without recursion, so a hostile nesting depth cannot overflow the stack. */
function checkSize(json: unknown): void {
	const stack: { value: unknown; depth: number }[] = [{ value: json, depth: 0 }];
	let leaves = 0;
	while (stack.length > 0) {
		const { value, depth } = stack.pop()!;
		if (value === null || typeof value !== 'object') continue;
		const parts = (value as { parts?: unknown }).parts;
		if (Array.isArray(parts)) {
			if (depth + 1 > MODEL_LIMITS.depth) {
				throw new SignatureError(
					'bad_model',
					`The device model nests series/parallel lists more than ${MODEL_LIMITS.depth} deep.`
				);
			}
			if (parts.length > MODEL_LIMITS.partsPerList) {
				throw new SignatureError(
					'bad_model',
					`A series or parallel list holds at most ${MODEL_LIMITS.partsPerList} parts (found ${parts.length}).`
				);
			}
			for (const p of parts) stack.push({ value: p, depth: depth + 1 });
		} else if (++leaves > MODEL_LIMITS.leaves) {
			throw new SignatureError(
				'bad_model',
				`The device model has more than ${MODEL_LIMITS.leaves} parts.`
			);
		}
	}
}

/**
 * Validates a device model: parsed JSON, or JSON text. Throws SignatureError('bad_model') naming
 * the first offending field, e.g. `parts[1].ohms: Resistance ohms must be between …`.
 */
export function parseModel(json: unknown): DeviceModel {
	let value = json;
	if (typeof json === 'string') {
		try {
			value = JSON.parse(json);
		} catch (e) {
			throw new SignatureError(
				'bad_model',
				`The device model is not valid JSON: ${(e as Error).message}`
			);
		}
	}
	if (value === null || typeof value !== 'object' || Array.isArray(value)) {
		throw new SignatureError(
			'bad_model',
			'The device model must be a JSON object such as {"kind":"resistor","ohms":1000}.'
		);
	}
	checkSize(value);
	const result = deviceModel.safeParse(value);
	if (!result.success) {
		const issue = result.error.issues[0];
		const where = pathText(issue.path);
		let message = issue.message;
		if (issue.code === 'unrecognized_keys') {
			message = `Unknown field${issue.keys.length > 1 ? 's' : ''} ${issue.keys.join(', ')}.`;
		}
		throw new SignatureError('bad_model', where ? `${where}: ${message}` : message);
	}
	return result.data;
}

// ---------------------------------------------------------------------------------------------
// Netlist
// ---------------------------------------------------------------------------------------------

const REF = 0;
const PROBE = 1;

interface RawJunction {
	a: number;
	k: number;
	is: number;
	n: number;
	bv: number | null;
	ibv: number;
}

interface RawNetlist {
	nodes: number;
	parent: number[];
	resistors: { a: number; b: number; ohms: number }[];
	capacitors: { a: number; b: number; farads: number }[];
	inductors: { a: number; b: number; henries: number }[];
	junctions: RawJunction[];
}

function find(parent: number[], x: number): number {
	while (parent[x] !== x) {
		parent[x] = parent[parent[x]];
		x = parent[x];
	}
	return x;
}

function union(parent: number[], a: number, b: number): void {
	const ra = find(parent, a);
	const rb = find(parent, b);
	if (ra === rb) return;
	// Keep the reference node as the root of its set so it stays recognisable.
	if (rb === REF) parent[ra] = rb;
	else parent[rb] = ra;
}

function flatten(model: DeviceModel): RawNetlist {
	const net: RawNetlist = {
		nodes: 2,
		parent: [0, 1],
		resistors: [],
		capacitors: [],
		inductors: [],
		junctions: []
	};
	const newNode = () => {
		net.parent.push(net.nodes);
		return net.nodes++;
	};
	const place = (m: DeviceModel, a: number, b: number): void => {
		switch (m.kind) {
			case 'open':
				return;
			case 'short':
				union(net.parent, a, b);
				return;
			case 'resistor':
				net.resistors.push({ a, b, ohms: m.ohms });
				return;
			case 'capacitor':
				net.capacitors.push({ a, b, farads: m.farads });
				return;
			case 'inductor':
				net.inductors.push({ a, b, henries: m.henries });
				return;
			case 'diode': {
				const anode = m.reversed ? b : a;
				const cathode = m.reversed ? a : b;
				const rs = m.rs ?? DIODE_DEFAULTS.rs;
				let junctionAnode = anode;
				if (rs > 0) {
					junctionAnode = newNode();
					net.resistors.push({ a: anode, b: junctionAnode, ohms: rs });
				}
				net.junctions.push({
					a: junctionAnode,
					k: cathode,
					is: m.is ?? DIODE_DEFAULTS.is,
					n: m.n ?? DIODE_DEFAULTS.n,
					bv: m.bv ?? null,
					ibv: m.ibv ?? DIODE_DEFAULTS.ibv
				});
				return;
			}
			case 'series': {
				let from = a;
				m.parts.forEach((part, idx) => {
					const to = idx === m.parts.length - 1 ? b : newNode();
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
	place(model, PROBE, REF);
	return net;
}

interface Junction {
	/** Unknown indices of anode and cathode; −1 is the reference node. */
	a: number;
	k: number;
	is: number;
	nvt: number;
	vcrit: number;
	bv: number | null;
	ibv: number;
	vcritBreakdown: number;
	/** exp(−bv/(n·Vt)), so the breakdown term is zero at V = 0. */
	breakdownOffset: number;
}

/** The companion-model system of one network at one time step length. */
interface Circuit {
	/** Unknowns: node voltages, then inductor branch currents. */
	size: number;
	/** Number of node-voltage unknowns (the first ones). */
	nodeCount: number;
	probe: number;
	/** Linear part of the Jacobian, size × size, row-major. */
	gLin: Float64Array;
	/** Number of reactive elements (capacitors, then inductors). */
	m: number;
	/** q_k = y[selA] − y[selB] (−1 reads as 0): capacitor voltage or inductor current. */
	selA: Int32Array;
	selB: Int32Array;
	/** Full-scale unit of each q_k, for the convergence norms. */
	qScale: Float64Array;
	/** rhs += hist · z, hist is size × 2m, z = (q at step n, q at step n − 1). */
	hist: Float64Array;
	junctions: Junction[];
	sourceConductance: number;
}

function addAt(mat: Float64Array, size: number, r: number, c: number, val: number): void {
	if (r >= 0 && c >= 0) mat[r * size + c] += val;
}

function stampConductance(mat: Float64Array, size: number, a: number, b: number, g: number): void {
	addAt(mat, size, a, a, g);
	addAt(mat, size, b, b, g);
	addAt(mat, size, a, b, -g);
	addAt(mat, size, b, a, -g);
}

function buildCircuit(net: RawNetlist, conditions: TestConditions, h: number): Circuit | null {
	const { parent } = net;
	const index = new Map<number, number>();
	const refRoot = find(parent, REF);
	let nodes = 0;
	const nodeOf = (raw: number): number => {
		const root = find(parent, raw);
		if (root === refRoot) return -1;
		let idx = index.get(root);
		if (idx === undefined) {
			idx = nodes++;
			index.set(root, idx);
		}
		return idx;
	};
	const probe = nodeOf(PROBE);
	if (probe < 0) return null;

	const resistors = net.resistors
		.map((r) => ({ a: nodeOf(r.a), b: nodeOf(r.b), ohms: r.ohms }))
		.filter((r) => r.a !== r.b);
	const capacitors = net.capacitors
		.map((c) => ({ a: nodeOf(c.a), b: nodeOf(c.b), farads: c.farads }))
		.filter((c) => c.a !== c.b);
	const inductors = net.inductors
		.map((l) => ({ a: nodeOf(l.a), b: nodeOf(l.b), henries: l.henries }))
		.filter((l) => l.a !== l.b);
	const rawJunctions = net.junctions
		.map((j) => ({ ...j, a: nodeOf(j.a), k: nodeOf(j.k) }))
		.filter((j) => j.a !== j.k);
	// Give the internal nodes of every element an index even if nothing else touches them.
	for (let raw = 0; raw < net.nodes; raw++) nodeOf(raw);

	const size = nodes + inductors.length;
	const gLin = new Float64Array(size * size);
	const sourceConductance = 1 / conditions.sourceResistanceOhm;
	addAt(gLin, size, probe, probe, sourceConductance);
	for (let i = 0; i < nodes; i++) if (i !== probe) addAt(gLin, size, i, i, GMIN_NODE);
	for (const r of resistors) stampConductance(gLin, size, r.a, r.b, 1 / r.ohms);

	const m = capacitors.length + inductors.length;
	const selA = new Int32Array(m);
	const selB = new Int32Array(m);
	const qScale = new Float64Array(m);
	const hist = new Float64Array(size * 2 * m);
	const vs = conditions.sourcePeakV;
	const isc = vs / conditions.sourceResistanceOhm;

	capacitors.forEach((c, k) => {
		// BDF2: i = C·(3q' − 4q + q⁻)/(2h), a conductance 3C/(2h) plus a history current.
		stampConductance(gLin, size, c.a, c.b, (3 * c.farads) / (2 * h));
		const now = (2 * c.farads) / h;
		const before = -c.farads / (2 * h);
		addAt(hist, 2 * m, c.a, k, now);
		addAt(hist, 2 * m, c.b, k, -now);
		addAt(hist, 2 * m, c.a, m + k, before);
		addAt(hist, 2 * m, c.b, m + k, -before);
		selA[k] = c.a;
		selB[k] = c.b;
		qScale[k] = vs;
	});
	inductors.forEach((l, idx) => {
		const k = capacitors.length + idx;
		const row = nodes + idx;
		// Branch current j leaves node a. BDF2 for v = L·dj/dt, divided by 3L/(2h):
		// (2h/(3L))·(va − vb) − j' = −(4j − j⁻)/3.
		addAt(gLin, size, l.a, row, 1);
		addAt(gLin, size, l.b, row, -1);
		const g = (2 * h) / (3 * l.henries);
		addAt(gLin, size, row, l.a, g);
		addAt(gLin, size, row, l.b, -g);
		addAt(gLin, size, row, row, -1);
		addAt(hist, 2 * m, row, k, -4 / 3);
		addAt(hist, 2 * m, row, m + k, 1 / 3);
		selA[k] = row;
		selB[k] = -1;
		qScale[k] = isc;
	});

	const junctions: Junction[] = rawJunctions.map((j) => {
		const nvt = j.n * THERMAL_VOLTAGE;
		return {
			a: j.a,
			k: j.k,
			is: j.is,
			nvt,
			vcrit: nvt * Math.log(nvt / (Math.SQRT2 * j.is)),
			bv: j.bv,
			ibv: j.ibv,
			vcritBreakdown: nvt * Math.log(nvt / (Math.SQRT2 * j.ibv)),
			breakdownOffset: j.bv === null ? 0 : Math.exp(-j.bv / nvt)
		};
	});
	for (const j of junctions) stampConductance(gLin, size, j.a, j.k, GMIN);

	return {
		size,
		nodeCount: nodes,
		probe,
		gLin,
		m,
		selA,
		selB,
		qScale,
		hist,
		junctions,
		sourceConductance
	};
}

// ---------------------------------------------------------------------------------------------
// Dense linear algebra (the systems have a handful of unknowns)
// ---------------------------------------------------------------------------------------------

/** In-place LU with partial pivoting. Returns false if the matrix is singular. */
function luFactor(a: Float64Array, n: number, piv: Int32Array): boolean {
	for (let col = 0; col < n; col++) {
		let best = col;
		let bestAbs = Math.abs(a[col * n + col]);
		for (let r = col + 1; r < n; r++) {
			const v = Math.abs(a[r * n + col]);
			if (v > bestAbs) {
				best = r;
				bestAbs = v;
			}
		}
		if (bestAbs === 0 || !Number.isFinite(bestAbs)) return false;
		piv[col] = best;
		if (best !== col) {
			for (let c = 0; c < n; c++) {
				const t = a[col * n + c];
				a[col * n + c] = a[best * n + c];
				a[best * n + c] = t;
			}
		}
		const d = a[col * n + col];
		for (let r = col + 1; r < n; r++) {
			const f = a[r * n + col] / d;
			if (f === 0) continue;
			a[r * n + col] = f;
			for (let c = col + 1; c < n; c++) a[r * n + c] -= f * a[col * n + c];
		}
	}
	return true;
}

function luSolve(a: Float64Array, n: number, piv: Int32Array, b: Float64Array): void {
	for (let i = 0; i < n; i++) {
		const p = piv[i];
		if (p !== i) {
			const t = b[i];
			b[i] = b[p];
			b[p] = t;
		}
	}
	for (let i = 1; i < n; i++) {
		let s = b[i];
		for (let j = 0; j < i; j++) s -= a[i * n + j] * b[j];
		b[i] = s;
	}
	for (let i = n - 1; i >= 0; i--) {
		let s = b[i];
		for (let j = i + 1; j < n; j++) s -= a[i * n + j] * b[j];
		b[i] = s / a[i * n + i];
	}
}

/**
 * Solves a·x = b by Gaussian elimination with full pivoting, treating directions whose pivot is
 * negligible as free and setting them to zero. The shooting matrix M − I is exactly singular for
 * modes the terminals cannot see (a current circulating in a loop of ideal inductors); any value
 * of such a mode is a steady state, and zero is as good as another.
 */
function solveRegularised(a: Float64Array, n: number, b: Float64Array): Float64Array {
	const rowPerm = Array.from({ length: n }, (_, i) => i);
	const colPerm = Array.from({ length: n }, (_, i) => i);
	let scale = 0;
	for (let i = 0; i < n * n; i++) scale = Math.max(scale, Math.abs(a[i]));
	const tiny = scale * 1e-13;
	let rank = 0;
	for (; rank < n; rank++) {
		let br = rank;
		let bc = rank;
		let best = -1;
		for (let r = rank; r < n; r++) {
			for (let c = rank; c < n; c++) {
				const v = Math.abs(a[rowPerm[r] * n + colPerm[c]]);
				if (v > best) {
					best = v;
					br = r;
					bc = c;
				}
			}
		}
		if (!(best > tiny)) break;
		[rowPerm[rank], rowPerm[br]] = [rowPerm[br], rowPerm[rank]];
		[colPerm[rank], colPerm[bc]] = [colPerm[bc], colPerm[rank]];
		const pr = rowPerm[rank];
		const pc = colPerm[rank];
		const d = a[pr * n + pc];
		for (let r = rank + 1; r < n; r++) {
			const rr = rowPerm[r];
			const f = a[rr * n + pc] / d;
			if (f === 0) continue;
			for (let c = rank; c < n; c++) a[rr * n + colPerm[c]] -= f * a[pr * n + colPerm[c]];
			b[rr] -= f * b[pr];
		}
	}
	const x = new Float64Array(n);
	for (let i = rank - 1; i >= 0; i--) {
		const pr = rowPerm[i];
		let s = b[pr];
		for (let j = i + 1; j < rank; j++) s -= a[pr * n + colPerm[j]] * x[colPerm[j]];
		x[colPerm[i]] = s / a[pr * n + colPerm[i]];
	}
	return x;
}

// ---------------------------------------------------------------------------------------------
// Junctions
// ---------------------------------------------------------------------------------------------

function expLimited(x: number): number {
	return x > MAX_EXPONENT ? Math.exp(MAX_EXPONENT) * (1 + x - MAX_EXPONENT) : Math.exp(x);
}

function expLimitedSlope(x: number): number {
	return x > MAX_EXPONENT ? Math.exp(MAX_EXPONENT) : Math.exp(x);
}

/** Junction current (anode to cathode) and its conductance at junction voltage vd. */
function junctionCurrent(j: Junction, vd: number, out: { i: number; g: number }): void {
	const x = vd / j.nvt;
	let i = j.is * (expLimited(x) - 1);
	let g = (j.is * expLimitedSlope(x)) / j.nvt;
	if (j.bv !== null) {
		const u = -(vd + j.bv) / j.nvt;
		i -= j.ibv * (expLimited(u) - j.breakdownOffset);
		g += (j.ibv * expLimitedSlope(u)) / j.nvt;
	}
	out.i = i;
	out.g = g;
}

/** SPICE's pnjlim: limits the step of an exponential's argument to keep Newton in range. */
function pnjlim(vnew: number, vold: number, vt: number, vcrit: number): number {
	if (vnew > vcrit && Math.abs(vnew - vold) > 2 * vt) {
		if (vold > 0) {
			const arg = 1 + (vnew - vold) / vt;
			return arg > 0 ? vold + vt * Math.log(arg) : vcrit;
		}
		return vt * Math.log(vnew / vt);
	}
	return vnew;
}

function limitJunction(j: Junction, vnew: number, vold: number): number {
	if (vnew >= 0) return pnjlim(vnew, vold, j.nvt, j.vcrit);
	if (j.bv !== null && vnew < -j.bv + 10 * j.nvt) {
		const w = pnjlim(-(vnew + j.bv), -(vold + j.bv), j.nvt, j.vcritBreakdown);
		return -(w + j.bv);
	}
	return vnew;
}

// ---------------------------------------------------------------------------------------------
// Integration over one period
// ---------------------------------------------------------------------------------------------

interface PeriodResult {
	/** State after the period. */
	zEnd: Float64Array;
	/** Probe-1 voltage at steps 0 … steps − 1 (step 0 taken from the period's end). */
	v: Float64Array;
	/** ∂zEnd/∂z0, 2m × 2m row-major, when asked for. */
	monodromy: Float64Array | null;
}

class Integrator {
	private readonly c: Circuit;
	private readonly steps: number;
	private readonly jac: Float64Array;
	private readonly piv: Int32Array;
	private readonly rhs: Float64Array;
	/** The step's right-hand side before the junctions' companion currents, for kclHolds. */
	private readonly rhsLin: Float64Array;
	private readonly residual: Float64Array;
	private readonly magnitude: Float64Array;
	private readonly y: Float64Array;
	private readonly yNew: Float64Array;
	/** Junction voltages the next linearisation uses (carried across steps and periods). */
	private readonly vj: Float64Array;
	/** Junction voltages at the start of the step being solved, for the shunt-stepping retry. */
	private readonly vjStart: Float64Array;
	/** Junction currents and conductances at the current linearisation point. */
	private readonly jI: Float64Array;
	private readonly jG: Float64Array;
	private readonly linear: boolean;
	private linearFactored = false;
	/** A linear network's monodromy matrix does not depend on the state: computed once. */
	private monodromyCache: Float64Array | null = null;
	private readonly col: Float64Array;
	/** Per-step transition matrix of the state, 2m × 2m. */
	private readonly stepMatrix: Float64Array;
	private readonly tmp: Float64Array;
	private readonly jCur = { i: 0, g: 0 };
	/** Source voltage at step s of the period. */
	private readonly source: Float64Array;
	readonly stats: SimulationStats = { periods: 0, steps: 0, newtonIterations: 0 };
	/** Current tolerance of the junction equations, A. */
	private readonly tolI: number;
	/** KCL tolerance of kclHolds, A: 10⁻⁷ of full-scale current. */
	private readonly kclTolerance: number;

	constructor(c: Circuit, steps: number, vs: number, isc: number) {
		this.c = c;
		this.tolI = 1e-9 * isc + 1e-15;
		this.kclTolerance = 1e-7 * isc + 1e-15;
		this.steps = steps;
		this.jac = new Float64Array(c.size * c.size);
		this.piv = new Int32Array(c.size);
		this.rhs = new Float64Array(c.size);
		this.rhsLin = new Float64Array(c.size);
		this.residual = new Float64Array(c.size);
		this.magnitude = new Float64Array(c.size);
		this.y = new Float64Array(c.size);
		this.yNew = new Float64Array(c.size);
		this.vj = new Float64Array(c.junctions.length);
		this.vjStart = new Float64Array(c.junctions.length);
		this.jI = new Float64Array(c.junctions.length);
		this.jG = new Float64Array(c.junctions.length);
		this.linear = c.junctions.length === 0;
		this.col = new Float64Array(c.size);
		const m2 = 2 * c.m;
		this.stepMatrix = new Float64Array(m2 * m2);
		this.tmp = new Float64Array(m2 * m2);
		this.source = new Float64Array(steps + 1);
		for (let k = 0; k <= steps; k++) this.source[k] = vs * Math.sin((2 * Math.PI * k) / steps);
	}

	private q(k: number, y: Float64Array): number {
		const a = this.c.selA[k];
		const b = this.c.selB[k];
		return (a >= 0 ? y[a] : 0) - (b >= 0 ? y[b] : 0);
	}

	private factor(): void {
		if (!luFactor(this.jac, this.c.size, this.piv)) {
			throw new SignatureError(
				'no_convergence',
				'The simulator met a singular circuit matrix; check the device model for parts with extreme values.'
			);
		}
	}

	/** Right-hand side of the linear part: the source's Norton current and the BDF2 history. */
	private fillBase(e: number, z: Float64Array): void {
		const { c } = this;
		const n = c.size;
		const m2 = 2 * c.m;
		const base = this.rhs;
		const hist = c.hist;
		for (let r = 0; r < n; r++) {
			let s = 0;
			const off = r * m2;
			for (let k = 0; k < m2; k++) s += hist[off + k] * z[k];
			base[r] = s;
		}
		base[c.probe] += e * c.sourceConductance;
	}

	private copyInto(dst: Float64Array, src: Float64Array): void {
		for (let i = 0; i < src.length; i++) dst[i] = src[i];
	}

	/**
	 * Whether y satisfies the step's equations with the true junction currents, to kclTolerance plus the
	 * rounding floor of each row (1e-12 of the magnitudes it sums). This accepts the solution of
	 * an ill-conditioned system, such as a node between a large capacitor and a blocking diode,
	 * whose junction voltages jitter by rounding from one iteration to the next.
	 */
	private kclHolds(y: Float64Array): boolean {
		const { c } = this;
		const n = c.size;
		const res = this.residual;
		const mag = this.magnitude;
		for (let r = 0; r < n; r++) {
			let sum = -this.rhsLin[r];
			let abs = Math.abs(this.rhsLin[r]);
			for (let k = 0; k < n; k++) {
				const t = c.gLin[r * n + k] * y[k];
				sum += t;
				abs += Math.abs(t);
			}
			res[r] = sum;
			mag[r] = abs;
		}
		for (const j of c.junctions) {
			const vd = (j.a >= 0 ? y[j.a] : 0) - (j.k >= 0 ? y[j.k] : 0);
			junctionCurrent(j, vd, this.jCur);
			const i = this.jCur.i;
			if (j.a >= 0) {
				res[j.a] += i;
				mag[j.a] += Math.abs(i);
			}
			if (j.k >= 0) {
				res[j.k] -= i;
				mag[j.k] += Math.abs(i);
			}
		}
		for (let r = 0; r < n; r++) {
			if (!(Math.abs(res[r]) <= this.kclTolerance + 1e-12 * mag[r])) return false;
		}
		return true;
	}

	/** Solves one time step at source voltage e from state z; leaves the solution in this.y. */
	private solveStep(e: number, z: Float64Array): void {
		const { c } = this;
		const n = c.size;
		const base = this.rhs;

		if (this.linear) {
			if (!this.linearFactored) {
				this.copyInto(this.jac, c.gLin);
				this.factor();
				this.linearFactored = true;
			}
			this.fillBase(e, z);
			luSolve(this.jac, n, this.piv, base);
			this.copyInto(this.y, base);
			this.stats.newtonIterations++;
			return;
		}

		const start = this.vjStart;
		this.copyInto(start, this.vj);
		if (this.newton(e, z, 0, MAX_STEP_ITERATIONS)) return;
		// Newton failed from the last step's solution: approach this one by shunt stepping (SPICE's
		// gmin stepping), solving first with a conductance from every node to the reference ten
		// times the source's, then with a tenth of it, and so on down to none.
		this.copyInto(this.vj, start);
		for (let shunt = 10 * c.sourceConductance; shunt > 1e-13 * c.sourceConductance; shunt /= 10) {
			if (!this.newton(e, z, shunt, MAX_STEP_ITERATIONS)) break;
		}
		if (this.newton(e, z, 0, MAX_STEP_ITERATIONS)) return;
		throw new SignatureError(
			'no_convergence',
			'The simulator could not solve a time step of this device model (the diode equations did not converge).'
		);
	}

	/**
	 * Newton–Raphson on one time step, from the junction voltages in this.vj, with an extra
	 * conductance `shunt` from every node to the reference. Returns whether it converged; the
	 * solution is in this.y and the Jacobian at it stays factored in this.jac.
	 */
	private newton(e: number, z: Float64Array, shunt: number, maxIterations: number): boolean {
		const { c } = this;
		const n = c.size;
		const base = this.rhs;
		const tolV = 1e-7 * THERMAL_VOLTAGE;
		for (let it = 0; it < maxIterations; it++) {
			this.stats.newtonIterations++;
			this.copyInto(this.jac, c.gLin);
			if (shunt > 0) for (let r = 0; r < c.nodeCount; r++) this.jac[r * n + r] += shunt;
			this.fillBase(e, z);
			this.copyInto(this.rhsLin, base);
			for (let d = 0; d < c.junctions.length; d++) {
				const j = c.junctions[d];
				const vd = this.vj[d];
				junctionCurrent(j, vd, this.jCur);
				const g = this.jCur.g;
				this.jI[d] = this.jCur.i;
				this.jG[d] = g;
				const ieq = this.jCur.i - g * vd;
				stampConductance(this.jac, n, j.a, j.k, g);
				if (j.a >= 0) base[j.a] -= ieq;
				if (j.k >= 0) base[j.k] += ieq;
			}
			this.factor();
			luSolve(this.jac, n, this.piv, base);
			// A junction has converged when the voltage it was linearised at agrees with the
			// solution's, or when the linearised current there is within tolI of the true current,
			// so KCL holds to tolI. The second test settles junctions whose voltage is set by
			// currents far below full scale (the middle of two series diodes that both block).
			let converged = true;
			for (let d = 0; d < c.junctions.length; d++) {
				const j = c.junctions[d];
				const vnew = (j.a >= 0 ? base[j.a] : 0) - (j.k >= 0 ? base[j.k] : 0);
				const vold = this.vj[d];
				if (Math.abs(vnew - vold) > tolV + 1e-9 * Math.abs(vnew)) {
					const predicted = this.jI[d] + this.jG[d] * (vnew - vold);
					junctionCurrent(j, vnew, this.jCur);
					if (Math.abs(this.jCur.i - predicted) > this.tolI + 1e-9 * Math.abs(this.jCur.i)) {
						converged = false;
					}
				}
				this.vj[d] = limitJunction(j, vnew, vold);
			}
			this.copyInto(this.y, base);
			// Well-conditioned steps converge by the junction tests within a few iterations; the
			// KCL test is the fallback for the ill-conditioned ones.
			if (converged || (shunt === 0 && it >= KCL_FALLBACK_AFTER && this.kclHolds(base))) {
				return true;
			}
		}
		return false;
	}

	/** The state's transition over the step just solved, from the factored Jacobian, into stepMatrix. */
	private computeStepMatrix(): void {
		const { c } = this;
		const m = c.m;
		const m2 = 2 * m;
		const n = c.size;
		const a = this.stepMatrix;
		a.fill(0);
		for (let col = 0; col < m2; col++) {
			for (let r = 0; r < n; r++) this.col[r] = c.hist[r * m2 + col];
			luSolve(this.jac, n, this.piv, this.col);
			for (let k = 0; k < m; k++) a[k * m2 + col] = this.q(k, this.col);
		}
		for (let k = 0; k < m; k++) a[(m + k) * m2 + k] = 1;
	}

	/** out ← a·b for 2m × 2m matrices (out may not alias a or b). */
	private multiply(a: Float64Array, b: Float64Array, out: Float64Array): void {
		const m2 = 2 * this.c.m;
		for (let r = 0; r < m2; r++) {
			for (let col = 0; col < m2; col++) {
				let s = 0;
				for (let k = 0; k < m2; k++) s += a[r * m2 + k] * b[k * m2 + col];
				// Flush what would become subnormal: fast-decaying modes underflow over a period, and
				// subnormal arithmetic is two orders of magnitude slower.
				out[r * m2 + col] = Math.abs(s) < 1e-200 ? 0 : s;
			}
		}
	}

	/** Adds this step's transition to the monodromy matrix: S ← A·S. */
	private accumulate(sens: Float64Array): void {
		this.computeStepMatrix();
		this.multiply(this.stepMatrix, sens, this.tmp);
		this.copyInto(sens, this.tmp);
	}

	/** A linear network's monodromy matrix A^steps, by repeated squaring of its one step matrix. */
	private linearMonodromy(): Float64Array {
		const m2 = 2 * this.c.m;
		if (!this.linearFactored) {
			this.copyInto(this.jac, this.c.gLin);
			this.factor();
			this.linearFactored = true;
		}
		this.computeStepMatrix();
		let power = Float64Array.from(this.stepMatrix);
		let result = new Float64Array(m2 * m2);
		for (let k = 0; k < m2; k++) result[k * m2 + k] = 1;
		let scratch = new Float64Array(m2 * m2);
		for (let e = this.steps; e > 0; e >>= 1) {
			if (e & 1) {
				this.multiply(power, result, scratch);
				[result, scratch] = [scratch, result];
			}
			if (e > 1) {
				this.multiply(power, power, scratch);
				[power, scratch] = [scratch, power];
			}
		}
		return result;
	}

	/** The junction voltages the next step starts from, to restore after a failed trial. */
	saveWarmStart(): Float64Array {
		return Float64Array.from(this.vj);
	}

	restoreWarmStart(saved: Float64Array): void {
		this.copyInto(this.vj, saved);
	}

	/** Simulates one period from state z0. */
	period(z0: Float64Array, withMonodromy: boolean): PeriodResult {
		const { c, steps } = this;
		const m = c.m;
		const m2 = 2 * m;
		const z = Float64Array.from(z0);
		const zNext = new Float64Array(m2);
		const v = new Float64Array(steps);
		let sens: Float64Array | null = null;
		if (withMonodromy && !this.linear) {
			sens = new Float64Array(m2 * m2);
			for (let k = 0; k < m2; k++) sens[k * m2 + k] = 1;
		}
		this.stats.periods++;
		this.stats.steps += steps;
		for (let s = 1; s <= steps; s++) {
			this.solveStep(this.source[s], z);
			v[s % steps] = this.y[c.probe];
			if (sens) this.accumulate(sens);
			for (let k = 0; k < m; k++) {
				zNext[k] = this.q(k, this.y);
				zNext[m + k] = z[k];
			}
			this.copyInto(z, zNext);
		}
		if (withMonodromy && this.linear) {
			this.monodromyCache ??= this.linearMonodromy();
			sens = this.monodromyCache;
		}
		return { zEnd: z, v, monodromy: sens };
	}
}

/**
 * r = zEnd − z0, and its size in full-scale units (capacitor volts / Vs, inductor amperes /
 * (Vs/Rs)): the largest component, and the root sum of squares the line search minimises.
 */
function stateResidual(
	c: Circuit,
	z0: Float64Array,
	zEnd: Float64Array,
	out: Float64Array
): { max: number; l2: number } {
	let worst = 0;
	let sum = 0;
	for (let k = 0; k < 2 * c.m; k++) {
		out[k] = zEnd[k] - z0[k];
		const x = out[k] / c.qScale[k % c.m];
		worst = Math.max(worst, Math.abs(x));
		sum += x * x;
	}
	return { max: worst, l2: Math.sqrt(sum) };
}

function maxDifference(a: Float64Array, b: Float64Array): number {
	let worst = 0;
	for (let i = 0; i < a.length; i++) worst = Math.max(worst, Math.abs(a[i] - b[i]));
	return worst;
}

function notConverged(): SignatureError {
	return new SignatureError(
		'no_convergence',
		`The simulation did not settle to a steady state within ${MAX_PERIODS} periods; try less extreme part values.`
	);
}

/** Probe-1 voltage over one steady-state period, at every internal step. */
function steadyState(c: Circuit, steps: number, vs: number, stats: SimulationStats): Float64Array {
	const integ = new Integrator(c, steps, vs, vs * c.sourceConductance);
	try {
		return shoot(c, integ, vs);
	} finally {
		stats.periods = integ.stats.periods;
		stats.steps = integ.stats.steps;
		stats.newtonIterations = integ.stats.newtonIterations;
	}
}

/** A period from a trial state, or null when a time step fails there (the state is too far out). */
function tryPeriod(integ: Integrator, z: Float64Array): PeriodResult | null {
	const saved = integ.saveWarmStart();
	try {
		return integ.period(z, true);
	} catch (e) {
		if (e instanceof SignatureError && e.code === 'no_convergence') {
			integ.restoreWarmStart(saved);
			return null;
		}
		throw e;
	}
}

function shoot(c: Circuit, integ: Integrator, vs: number): Float64Array {
	const m2 = 2 * c.m;
	// Without capacitors or inductors the network has no memory: every period is the steady state.
	if (c.m === 0) return integ.period(new Float64Array(0), false).v;
	const budgetLeft = () => integ.stats.periods < MAX_PERIODS;

	let z: Float64Array = new Float64Array(m2);
	let cur = integ.period(z, true);
	const r = new Float64Array(m2);
	let res = stateResidual(c, z, cur.zEnd, r);
	/** Newton steps that failed to reduce the residual. */
	let stalls = 0;
	for (;;) {
		// Converged, or Newton is stuck on a mode so slow (a capacitor charged through a diode and
		// discharged only by leakage) that the state residual cannot tell: then the definition
		// itself decides, two successive periods agreeing.
		if (res.max <= STATE_TOLERANCE || stalls >= 2) {
			const next = integ.period(cur.zEnd, false);
			if (maxDifference(cur.v, next.v) <= PERIOD_AGREEMENT * vs) return next.v;
			if (!budgetLeft()) throw notConverged();
			// Rare: simulate that period again, this time with the monodromy Newton needs.
			z = cur.zEnd;
			cur = integ.period(z, true);
			res = stateResidual(c, z, cur.zEnd, r);
			if (res.max <= STATE_TOLERANCE) continue;
		}
		if (!budgetLeft()) throw notConverged();

		// Newton on P(z) − z = 0: (M − I)·Δ = −r, damped by halving until the residual shrinks.
		const mat = Float64Array.from(cur.monodromy!);
		for (let k = 0; k < m2; k++) mat[k * m2 + k] -= 1;
		const rhs = Float64Array.from(r, (x) => -x);
		const delta = solveRegularised(mat, m2, rhs);

		let lambda = 1;
		let accepted = false;
		for (let tries = 0; tries < 6 && budgetLeft(); tries++) {
			const zt = Float64Array.from(z, (x, k) => x + lambda * delta[k]);
			const trial = tryPeriod(integ, zt);
			if (!trial) {
				lambda /= 2;
				continue;
			}
			const rt = new Float64Array(m2);
			const nt = stateResidual(c, zt, trial.zEnd, rt);
			if (Number.isFinite(nt.l2) && nt.l2 < res.l2) {
				z = zt;
				cur = trial;
				r.set(rt);
				res = nt;
				accepted = true;
				break;
			}
			lambda /= 2;
		}
		if (!accepted) {
			// No progress: take one period of plain transient and try again from there.
			stalls++;
			if (!budgetLeft()) throw notConverged();
			z = cur.zEnd;
			cur = integ.period(z, true);
			res = stateResidual(c, z, cur.zEnd, r);
		}
	}
}

/** What one simulation cost, for benchmarks and convergence tests. */
export interface SimulationStats {
	/** Periods integrated (Newton trials and the final agreement check included). */
	periods: number;
	/** Time steps integrated. */
	steps: number;
	/** Linear solves of the circuit equations (Newton iterations over all steps). */
	newtonIterations: number;
}

/**
 * Simulates the tester circuit with `model` between the probes at `conditions`, at periodic steady
 * state, and returns the canonical curve sampled at `points` phases (default CANONICAL_POINTS)
 * from the source's upward zero crossing. Throws SignatureError 'bad_model', 'bad_conditions' or
 * 'no_convergence'; RangeError for a `points` outside MIN_POINTS…MAX_POINTS. When `stats` is given it
 * is filled with what the simulation cost.
 */
export function simulate(
	model: DeviceModel,
	conditions: TestConditions,
	options: { points?: number; stats?: SimulationStats } = {}
): CanonicalCurve {
	const points = options.points ?? CANONICAL_POINTS;
	if (!Number.isInteger(points) || points < MIN_POINTS || points > MAX_POINTS) {
		throw new RangeError(`points must be a whole number from ${MIN_POINTS} to ${MAX_POINTS}.`);
	}
	const checked = testConditions.safeParse(conditions);
	if (!checked.success) {
		throw new SignatureError('bad_conditions', checked.error.issues[0].message);
	}
	const cond: TestConditions = {
		sourcePeakV: checked.data.sourcePeakV,
		sourceResistanceOhm: checked.data.sourceResistanceOhm,
		frequencyHz: checked.data.frequencyHz
	};
	const device = parseModel(model);
	const vs = cond.sourcePeakV;
	const rs = cond.sourceResistanceOhm;

	const net = flatten(device);
	const hasMemory = net.capacitors.length + net.inductors.length > 0;
	const perPoint = hasMemory ? Math.max(1, Math.ceil(MIN_STEPS_PER_PERIOD / points)) : 1;
	const steps = points * perPoint;
	const h = 1 / (cond.frequencyHz * steps);
	const circuit = buildCircuit(net, cond, h);

	const v = new Float64Array(points);
	const i = new Float64Array(points);
	const stats = options.stats ?? { periods: 0, steps: 0, newtonIterations: 0 };
	stats.periods = stats.steps = stats.newtonIterations = 0;
	const full = circuit ? steadyState(circuit, steps, vs, stats) : null;
	for (let k = 0; k < points; k++) {
		const e = vs * Math.sin((2 * Math.PI * k) / points);
		const vk = full ? full[k * perPoint] : 0;
		v[k] = vk;
		i[k] = (e - vk) / rs;
	}
	return toCanonical(v, i, cond, { periods: 0, periodSpread: null, simulated: true });
}
