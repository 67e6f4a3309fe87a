import type { Kysely } from 'kysely';
import { simulationUpload } from '../../schemas/traces';
import { isSignatureError, type SignatureError } from '../../signature/errors';
import { formatConditions, formatSI } from '../../signature/format';
import { parseModel } from '../../signature/simulate';
import type { DeviceModel } from '../../signature/types';
import { plainError, type PlainError } from '../../traces/messages';
import { buildModel, readConditionText, SIMULATION_FIELDS } from '../../traces/simulation';
import { apiError, toApiIssues, type ApiIssue } from '../api/errors';
import type { Database } from '../db/connect';
import { recordEntryChange } from '../entries/changes';
import { insertTrace, processSimulation, type ProcessedTrace } from './service';

/** A simulated known-good reference, predicted and analysed by the server, not yet stored. */
export interface SimulatedReference {
	label: string;
	model: DeviceModel;
	processed: ProcessedTrace;
}

export type SimulationResult = ({ ok: true } & SimulatedReference) | { ok: false; response: Response };

/** What the server makes of a simulation request: the reference, or why it was refused. */
export type SimulationCheck =
	| ({ ok: true } & SimulatedReference)
	| { ok: false; code: 'invalid_input'; issues: ApiIssue[] }
	| { ok: false; code: 'invalid_model'; error: SignatureError };

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
 * Checks a simulation request — the API's JSON body `{ sourcePeakV, sourceResistanceOhm,
 * frequencyHz, label?, simulate: { model } }`, which the no-JavaScript form builds too — and
 * predicts the curve with the engine. Nothing is stored here.
 */
export function checkSimulation(body: unknown): SimulationCheck {
	const parsed = simulationUpload.safeParse(body);
	if (!parsed.success) return { ok: false, code: 'invalid_input', issues: toApiIssues(parsed.error.issues) };
	const conditions = { sourcePeakV: parsed.data.sourcePeakV, sourceResistanceOhm: parsed.data.sourceResistanceOhm, frequencyHz: parsed.data.frequencyHz };
	try {
		const model = parseModel(parsed.data.simulate.model);
		const processed = processSimulation(model, conditions);
		const label = parsed.data.label || `Simulated ${describeModel(model)} at ${formatConditions(conditions)}`;
		return { ok: true, label: label.slice(0, 120), model, processed };
	} catch (e) {
		if (!isSignatureError(e)) throw e;
		return { ok: false, code: 'invalid_model', error: e };
	}
}

/**
 * Reads a simulation request (already parsed JSON) for the API: bad input becomes a 400/422
 * response with a stable code; nothing is stored here.
 */
export function readSimulationUpload(body: unknown): SimulationResult {
	const checked = checkSimulation(body);
	if (checked.ok) return checked;
	if (checked.code === 'invalid_input') {
		return { ok: false, response: apiError(400, 'invalid_input', 'Check the test conditions and the model.', checked.issues) };
	}
	const e = checked.error;
	return {
		ok: false,
		response: new Response(
			JSON.stringify({ error: { code: 'invalid_model', message: e.message, reason: e.code, issues: [{ path: 'simulate.model', message: e.message }] } }),
			{ status: 422, headers: { 'content-type': 'application/json', 'cache-control': 'no-store' } }
		)
	};
}

/** Stores a checked reference on the entry as a simulated known-good trace, in one transaction. */
export async function attachSimulatedReference(
	db: Kysely<Database>,
	member: { orgId: string; userId: string },
	entryId: string,
	ref: SimulatedReference
): Promise<string> {
	return db.transaction().execute(async (trx) => {
		const id = await insertTrace(trx, member.orgId, {
			entryId,
			role: 'known-good',
			label: ref.label,
			createdBy: member.userId,
			processed: ref.processed,
			model: ref.model
		});
		await recordEntryChange(trx, member.orgId, entryId, 'upsert');
		return id;
	});
}

/** A refused no-JavaScript simulation: the typed values, a sentence per field, and the engine's refusal. */
export interface SimulationFormFailure {
	status: 400 | 422;
	values: Record<string, string>;
	fieldErrors: Record<string, string>;
	error: PlainError | null;
}

export type SimulationFormRead = { ok: true; reference: SimulatedReference } | { ok: false; failure: SimulationFormFailure };

/**
 * The simulation picker's fields as a browser without script posts them (the part, its values
 * with prefixes, the conditions, the label), turned into the API's request and checked by
 * `checkSimulation`, so both paths store the same thing.
 */
export function readSimulationForm(form: FormData): SimulationFormRead {
	const values: Record<string, string> = {};
	for (const name of SIMULATION_FIELDS) {
		const v = form.get(name);
		if (typeof v === 'string') values[name] = v.slice(0, 200);
	}
	const refuse = (status: 400 | 422, fieldErrors: Record<string, string>, error: PlainError | null = null): SimulationFormRead => ({
		ok: false,
		failure: { status, values, fieldErrors, error }
	});
	const conditions = readConditionText(values);
	const model = buildModel(values.kind, values);
	if (!conditions.ok || !model.ok) return refuse(400, { ...(conditions.ok ? {} : conditions.fieldErrors), ...(model.ok ? {} : model.fieldErrors) });
	const checked = checkSimulation({ ...conditions.value, label: values.label ?? '', simulate: { model: model.model } });
	if (checked.ok) return { ok: true, reference: { label: checked.label, model: checked.model, processed: checked.processed } };
	if (checked.code === 'invalid_input') {
		const fieldErrors: Record<string, string> = {};
		for (const issue of checked.issues) fieldErrors[issue.path.startsWith('simulate') ? 'kind' : issue.path] ??= issue.message;
		return refuse(400, fieldErrors);
	}
	const plain = plainError(checked.error);
	return refuse(422, { kind: plain.sentence }, plain);
}
