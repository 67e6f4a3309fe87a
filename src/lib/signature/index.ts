/**
 * The signature engine's public API, and the pipeline that takes a capture file to an analysis:
 *
 *   parseCapture (file → SI samples) → inferUnits (only for files that do not state their units)
 *   → canonicalise (samples → one period on the phase grid) → analyse (class, parameters, residual)
 *
 * Pure TypeScript with no I/O, so the browser previews with the same code the server trusts.
 */
import { analyse } from './analyse';
import { canonicalise, inferUnits } from './canonical';
import { parseCapture } from './parse';
import type { Analysis, CanonicalCurve, ParseOptions, ParsedCapture, TestConditions } from './types';

export * from './types';
export * from './errors';
export * from './conditions';
export { toCanonical } from './curve';
export { formatSI, formatConditions } from './format';
export { parseCapture, MAX_BYTES, MAX_SAMPLES, MIN_SAMPLES } from './parse';
export { canonicalise, inferUnits } from './canonical';
export { analyse, KNEE_CURRENT_FRACTION } from './analyse';
export {
	compare,
	shapeDistance,
	conditionsComparable,
	descriptor,
	descriptorDistance,
	descriptorTail,
	similarityOf,
	DESCRIPTOR_LENGTH
} from './compare';
export { simulate, parseModel, deviceModel, type SimulationStats } from './simulate';

export interface CaptureAnalysis {
	capture: ParsedCapture;
	curve: CanonicalCurve;
	analysis: Analysis;
	/** Import, canonical-form and analysis warnings together, in that order, without repeats. */
	warnings: string[];
}

/**
 * parse → canonicalise → analyse. Throws SignatureError for input a technician must fix (bad file,
 * bad conditions, no period found).
 */
export function analyseCapture(
	input: string | Uint8Array,
	conditions: TestConditions,
	options: ParseOptions & { points?: number } = {}
): CaptureAnalysis {
	const { points, ...parseOptions } = options;
	const capture = inferUnits(parseCapture(input, parseOptions), conditions);
	const curve = canonicalise(capture.samples, conditions, { points });
	const analysis = analyse(curve);
	const warnings = [...new Set([...capture.warnings, ...(curve.warnings ?? []), ...analysis.warnings])];
	return { capture, curve, analysis, warnings };
}
