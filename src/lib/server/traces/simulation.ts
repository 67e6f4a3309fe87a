import { simulationUpload } from '../../schemas/traces';
import { isSignatureError } from '../../signature/errors';
import { formatConditions, formatSI } from '../../signature/format';
import { parseModel } from '../../signature/simulate';
import type { DeviceModel } from '../../signature/types';
import { apiError, toApiIssues } from '../api/errors';
import { processSimulation, type ProcessedTrace } from './service';

export type SimulationResult =
	| { ok: true; label: string; model: DeviceModel; processed: ProcessedTrace }
	| { ok: false; response: Response };

/** A short name for a model, for the default label: "4.7 kΩ resistor". */
export function describeModel(m: DeviceModel): string {
	switch (m.kind) {
		case 'open':
			return 'open circuit';
		case 'short':
			return 'short circuit';
		case 'resistor':
			return `${formatSI(m.ohms, 'Ω')} resistor`;
		case 'capacitor':
			return `${formatSI(m.farads, 'F')} capacitor`;
		case 'inductor':
			return `${formatSI(m.henries, 'H')} inductor`;
		case 'diode':
			return m.bv !== undefined ? `${formatSI(m.bv, 'V')} zener` : 'diode';
		case 'series':
			return `series network of ${m.parts.length}`;
		case 'parallel':
			return `parallel network of ${m.parts.length}`;
	}
}

/**
 * Reads a simulation request (already parsed JSON) and predicts the curve with the engine. Bad
 * input becomes a 400/422 response with a stable code; nothing is stored here.
 */
export function readSimulationUpload(body: unknown): SimulationResult {
	const parsed = simulationUpload.safeParse(body);
	if (!parsed.success) {
		return { ok: false, response: apiError(400, 'invalid_input', 'Check the test conditions and the model.', toApiIssues(parsed.error.issues)) };
	}
	const conditions = { sourcePeakV: parsed.data.sourcePeakV, sourceResistanceOhm: parsed.data.sourceResistanceOhm, frequencyHz: parsed.data.frequencyHz };
	try {
		const model = parseModel(parsed.data.simulate.model);
		const processed = processSimulation(model, conditions);
		const label = parsed.data.label || `Simulated ${describeModel(model)} at ${formatConditions(conditions)}`;
		return { ok: true, label: label.slice(0, 120), model, processed };
	} catch (e) {
		if (!isSignatureError(e)) throw e;
		return {
			ok: false,
			response: new Response(
				JSON.stringify({ error: { code: 'invalid_model', message: e.message, reason: e.code, issues: [{ path: 'simulate.model', message: e.message }] } }),
				{ status: 422, headers: { 'content-type': 'application/json', 'cache-control': 'no-store' } }
			)
		};
	}
}
