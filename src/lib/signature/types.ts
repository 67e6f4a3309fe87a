/**
 * The signature engine's shared vocabulary. Pure types and constants: no I/O, no framework.
 *
 * Sign convention (see DESIGN.md): V is the first probe minus the second; positive I flows into the
 * first probe. The tester is a sine source e(t) = Vs·sin(ωt) in series with Rs and the device, so at
 * every instant e = V + I·Rs. That identity lets any V-I capture, with or without a time column,
 * recover the source's phase; the canonical form uses it as its phase reference.
 */

/** Test conditions in SI units: source peak volts, source ohms, hertz. */
export interface TestConditions {
	sourcePeakV: number;
	sourceResistanceOhm: number;
	frequencyHz: number;
}

/** Raw samples in SI units (seconds, volts, amperes). `t` is present when the capture had a time column. */
export interface Samples {
	t?: number[];
	v: number[];
	i: number[];
}

export type CaptureFormat = 'vi-csv' | 'scope-csv' | 'json';

export interface ParseOptions {
	/** Force a format instead of detecting it. */
	format?: CaptureFormat;
	/** Unit of the voltage column when the header does not say (default V). */
	voltageUnit?: 'V' | 'mV';
	/** Unit of the current column when the header does not say (default A). */
	currentUnit?: 'A' | 'mA' | 'uA';
	/** Ohms of the current-sense resistor, required for scope exports. */
	senseOhm?: number;
	/** Scope exports: the first channel is the sense voltage and the second the device voltage. */
	swapChannels?: boolean;
	invertVoltage?: boolean;
	invertCurrent?: boolean;
}

export interface ParsedCapture {
	format: CaptureFormat;
	samples: Samples;
	/** Number of sample rows kept. */
	count: number;
	/** Key/value preamble of scope exports, as found. */
	metadata: Record<string, string>;
	/** Things a technician should know that did not stop the import. */
	warnings: string[];
	/**
	 * Whether the file or the options stated the units of the voltage and the current (absent: both
	 * stated, as in our SI JSON). Unstated units were taken as V and A.
	 */
	unitsStated?: { voltage: boolean; current: boolean };
}

/** Number of points of every canonical curve, uniformly spaced in source phase. */
export const CANONICAL_POINTS = 256;

/**
 * One period of the V-I curve. Point k sits at source phase θk = 2πk/N, where the source
 * e = V + I·Rs = Vs·sin(θ): point 0 is the source's upward zero crossing.
 */
export interface CanonicalCurve {
	conditions: TestConditions;
	/** Volts across the device, SI. */
	v: number[];
	/** Amperes into probe 1, SI. */
	i: number[];
	/** v / Vs: the horizontal full scale is ±1. */
	vn: number[];
	/** i / (Vs/Rs): the vertical full scale (short-circuit current) is ±1. */
	in: number[];
	/** Whole periods found in the capture (0 for a simulated curve). */
	periods: number;
	/**
	 * How well the periods agreed: RMS spread between periods as a fraction of full scale
	 * (0 = identical; null when fewer than two periods).
	 */
	periodSpread: number | null;
	/** True when the curve came from the simulator rather than a bench. */
	simulated: boolean;
	/** Things found while canonicalising a capture that a technician should know (optional). */
	warnings?: string[];
	/**
	 * Estimated RMS noise of each point of `vn` and `in` (fraction of full scale), from the scatter
	 * of the capture's own samples. Sparse captures are interpolated between samples, so the curve's
	 * point-to-point scatter understates their noise; this does not. Absent for simulated curves.
	 */
	noise?: number;
}

export type SignatureClass =
	| 'open'
	| 'short'
	| 'resistive'
	| 'capacitive'
	| 'inductive'
	| 'junction'
	| 'zener'
	| 'complex';

export const SIGNATURE_CLASSES: readonly SignatureClass[] = [
	'open',
	'short',
	'resistive',
	'capacitive',
	'inductive',
	'junction',
	'zener',
	'complex'
];

/** Names the analysis uses for its parameters, where they apply. */
export type ParameterName =
	| 'resistanceOhm'
	| 'capacitanceF'
	| 'leakageOhm'
	| 'inductanceH'
	| 'seriesResistanceOhm'
	| 'kneeV'
	| 'reverseKneeV'
	| 'breakdownV'
	| 'leakageA'
	| 'polarity';

export type Parameter =
	| { value: number; unit: string; uncertainty?: number }
	/** Polarity of a junction: which probe the anode sits on. */
	| { value: 'anode-at-probe-1' | 'cathode-at-probe-1'; unit: '' }
	| { unmeasurable: string };

export interface Analysis {
	class: SignatureClass;
	/** 0–1. */
	confidence: number;
	parameters: Partial<Record<ParameterName, Parameter>>;
	/**
	 * How much of the curve the fitted model fails to explain: RMS of the fit's residual as a
	 * fraction of full scale, in the normalised plane. Large means "something else is going on".
	 */
	residual: number;
	/** One line a technician can read, e.g. "resistor ≈ 2.2 kΩ". */
	summary: string;
	warnings: string[];
}

/** A device between the probes, as a network of ideal parts (our own JSON). */
export type DeviceModel =
	| { kind: 'open' }
	| { kind: 'short' }
	| { kind: 'resistor'; ohms: number }
	| { kind: 'capacitor'; farads: number }
	| { kind: 'inductor'; henries: number }
	| {
			kind: 'diode';
			/** Saturation current, A (default 1e-14). */
			is?: number;
			/** Emission coefficient (default 1). */
			n?: number;
			/** Series resistance, Ω (default 0). */
			rs?: number;
			/** Reverse breakdown voltage, V, positive; absent means no breakdown. */
			bv?: number;
			/** Current at breakdown, A (default 1e-3... see simulate). */
			ibv?: number;
			/** Default: anode at probe 1. `true`: cathode at probe 1. */
			reversed?: boolean;
	  }
	| { kind: 'series'; parts: DeviceModel[] }
	| { kind: 'parallel'; parts: DeviceModel[] };

/** Result of comparing two canonical curves. */
export interface Comparison {
	/** Shape distance in the normalised plane; 0 = identical. */
	distance: number;
	/** 0–100, for people. */
	similarity: number;
	/** False when the two curves' test conditions are not comparable. */
	comparable: boolean;
}
