import { z } from 'zod';
import { analyseCapture } from '$lib/signature/index';
import { testConditions } from '$lib/signature/conditions';
import { isSignatureError } from '$lib/signature/errors';
import { analyseOffThread, Superseded, type CapturePreviewAnalysis } from '$lib/signature/off-thread';
import type { Analysis, CanonicalCurve, TestConditions } from '$lib/signature/types';

/** The condition fields as typed (strings), SI units. */
export interface ConditionValues {
	sourcePeakV: string;
	sourceResistanceOhm: string;
	frequencyHz: string;
	senseOhm: string;
}

export type Preview =
	| {
			ok: true;
			conditions: TestConditions;
			curve: CanonicalCurve;
			analysis: Analysis;
			warnings: string[];
			format: string;
			samples: number;
	  }
	/** `field` names the input the technician has to change. */
	| { ok: false; field: 'file' | 'senseOhm'; message: string };

const blankToUndefined = (v: string) => (v.trim() === '' ? undefined : v);

/** The browser's own check of the condition fields, with the same rules as the server's. */
export function conditionErrors(values: ConditionValues): Record<string, string[]> {
	const parsed = testConditions.safeParse({
		sourcePeakV: blankToUndefined(values.sourcePeakV),
		sourceResistanceOhm: blankToUndefined(values.sourceResistanceOhm),
		frequencyHz: blankToUndefined(values.frequencyHz)
	});
	const errors: Record<string, string[]> = parsed.success ? {} : (z.flattenError(parsed.error).fieldErrors as Record<string, string[]>);
	const sense = values.senseOhm.trim();
	if (sense !== '' && !(Number(sense) > 0)) errors.senseOhm = ['The sense resistance must be a number of ohms above 0.'];
	return errors;
}

interface PreviewRequest {
	source: Uint8Array | string;
	conditions: TestConditions;
	senseOhm: number | undefined;
}

/** What to analyse, or null while there is nothing to analyse or the conditions are not valid yet. */
function request(source: Uint8Array | string | null, values: ConditionValues): PreviewRequest | null {
	if (source === null || Object.keys(conditionErrors(values)).length > 0) return null;
	return {
		source,
		conditions: {
			sourcePeakV: Number(values.sourcePeakV),
			sourceResistanceOhm: Number(values.sourceResistanceOhm),
			frequencyHz: Number(values.frequencyHz)
		},
		senseOhm: values.senseOhm.trim() === '' ? undefined : Number(values.senseOhm)
	};
}

function fromResult(conditions: TestConditions, r: CapturePreviewAnalysis): Preview {
	return { ok: true, conditions, curve: r.curve, analysis: r.analysis, warnings: r.warnings, format: r.capture.format, samples: r.capture.count };
}

function fromError(e: unknown): Preview {
	if (!isSignatureError(e)) {
		return { ok: false, field: 'file', message: 'This capture could not be read. Check that it is a CSV, scope export or JSON capture.' };
	}
	return { ok: false, field: e.code === 'missing_sense_resistance' ? 'senseOhm' : 'file', message: e.message };
}

/**
 * Runs the engine on the capture in the browser (parse → canonical → analyse), so the technician
 * sees the curve and its reading before anything is sent. Null while there is nothing to analyse
 * or the conditions are not valid yet (their fields say why).
 */
export function previewCapture(source: Uint8Array | string | null, values: ConditionValues): Preview | null {
	const req = request(source, values);
	if (!req) return null;
	try {
		return fromResult(req.conditions, analyseCapture(req.source, req.conditions, { senseOhm: req.senseOhm }));
	} catch (e) {
		return fromError(e);
	}
}

/**
 * The same, worked out in a worker thread (`analyseOffThread`), for captures large enough to
 * freeze the page. Rejects with `Superseded` when a newer capture replaced this one.
 */
export async function previewCaptureOffThread(source: Uint8Array | string | null, values: ConditionValues): Promise<Preview | null> {
	const req = request(source, values);
	if (!req) return null;
	try {
		return fromResult(req.conditions, await analyseOffThread(req.source, req.conditions, { senseOhm: req.senseOhm }));
	} catch (e) {
		if (e instanceof Superseded) throw e;
		return fromError(e);
	}
}
