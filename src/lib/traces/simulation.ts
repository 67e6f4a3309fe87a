/**
 * The parts a technician can simulate as a known-good reference, with the values they type
 * (engineering prefixes: 4k7, 2.2u, 100n), turned into the engine's device model. Pure: the
 * picker (in the browser) and its no-JavaScript form action (on the server) share this one list,
 * so a model added here appears in both.
 */
import { testConditions } from '../signature/conditions';
import { isSignatureError } from '../signature/errors';
import { formatSI } from '../signature/format';
import { MODEL_LIMITS, parseModel } from '../signature/simulate';
import type { DeviceModel, TestConditions } from '../signature/types';
import { plainError } from './messages';
import { parseEngineering } from './prefix';

type LimitName = 'ohms' | 'farads' | 'henries' | 'rs' | 'bv';

export interface ModelField {
	/** The form field's name; unique across every model, so one record holds all typed values. */
	name: string;
	label: string;
	unit: string;
	/** The text the field starts with, so a predicted curve shows at once. Empty for optional fields. */
	initial: string;
	/** Left empty, the engine's default applies (it then states nothing). */
	optional?: boolean;
	/** The engine's range for the value (`MODEL_LIMITS`). */
	limit: LimitName;
	/** Where the value sits in the device model, as the engine names it in a refusal. */
	path: string;
}

export interface ModelKind {
	id: string;
	label: string;
	fields: readonly ModelField[];
	/** Diodes: which way round the part sits between the probes. */
	polarity?: boolean;
	build: (v: Record<string, number>, reversed: boolean) => DeviceModel;
}

const seriesOhms: ModelField = {
	name: 'seriesOhms',
	label: 'Series resistance',
	unit: 'Ω',
	initial: '',
	optional: true,
	limit: 'rs',
	path: 'rs'
};

const diode = (v: Record<string, number>, reversed: boolean, bv?: number): DeviceModel => ({
	kind: 'diode',
	...(bv !== undefined ? { bv } : {}),
	// Zero is the engine's default; anything else (a negative value too) goes to the engine to check.
	...(v.seriesOhms !== undefined && v.seriesOhms !== 0 ? { rs: v.seriesOhms } : {}),
	...(reversed ? { reversed: true } : {})
});

/** Every part the picker and its form offer, in the order shown. */
export const MODEL_KINDS: readonly ModelKind[] = [
	{
		id: 'resistor',
		label: 'Resistor',
		fields: [{ name: 'ohms', label: 'Resistance', unit: 'Ω', initial: '4k7', limit: 'ohms', path: 'ohms' }],
		build: (v) => ({ kind: 'resistor', ohms: v.ohms })
	},
	{
		id: 'capacitor',
		label: 'Capacitor',
		fields: [{ name: 'farads', label: 'Capacitance', unit: 'F', initial: '1u', limit: 'farads', path: 'farads' }],
		build: (v) => ({ kind: 'capacitor', farads: v.farads })
	},
	{
		id: 'leaky-capacitor',
		label: 'Capacitor with leakage (C ∥ R)',
		fields: [
			{ name: 'farads', label: 'Capacitance', unit: 'F', initial: '1u', limit: 'farads', path: 'parts[0].farads' },
			{ name: 'leakageOhms', label: 'Leakage resistance', unit: 'Ω', initial: '10k', limit: 'ohms', path: 'parts[1].ohms' }
		],
		build: (v) => ({ kind: 'parallel', parts: [{ kind: 'capacitor', farads: v.farads }, { kind: 'resistor', ohms: v.leakageOhms }] })
	},
	{
		id: 'inductor',
		label: 'Inductor',
		fields: [{ name: 'henries', label: 'Inductance', unit: 'H', initial: '100m', limit: 'henries', path: 'henries' }],
		build: (v) => ({ kind: 'inductor', henries: v.henries })
	},
	{
		id: 'winding',
		label: 'Winding (L with series R)',
		fields: [
			{ name: 'windingHenries', label: 'Inductance', unit: 'H', initial: '1', limit: 'henries', path: 'parts[0].henries' },
			{ name: 'windingOhms', label: 'Winding resistance', unit: 'Ω', initial: '100', limit: 'ohms', path: 'parts[1].ohms' }
		],
		build: (v) => ({ kind: 'series', parts: [{ kind: 'inductor', henries: v.windingHenries }, { kind: 'resistor', ohms: v.windingOhms }] })
	},
	{ id: 'diode', label: 'Diode', fields: [seriesOhms], polarity: true, build: (v, reversed) => diode(v, reversed) },
	{
		id: 'zener',
		label: 'Zener diode',
		fields: [{ name: 'bv', label: 'Breakdown voltage', unit: 'V', initial: '5.1', limit: 'bv', path: 'bv' }, seriesOhms],
		polarity: true,
		build: (v, reversed) => diode(v, reversed, v.bv)
	},
	{ id: 'open', label: 'Open circuit', fields: [], build: () => ({ kind: 'open' }) },
	{ id: 'short', label: 'Short circuit', fields: [], build: () => ({ kind: 'short' }) }
];

export const DEFAULT_KIND = 'resistor';

/** Every field name the form may send: the model's, the conditions and the label. */
export const SIMULATION_FIELDS: readonly string[] = [
	'kind',
	...new Set(MODEL_KINDS.flatMap((k) => k.fields.map((f) => f.name))),
	'reversed',
	'sourcePeakV',
	'sourceResistanceOhm',
	'frequencyHz',
	'label'
];

/** A common low-voltage bench setting: 10 V peak, 1 kΩ, 60 Hz (common practice, no source). */
export const DEFAULT_CONDITION_TEXT = { sourcePeakV: '10', sourceResistanceOhm: '1k', frequencyHz: '60' } as const;

/** Every field's starting text: the typed values of a fresh form. */
export function initialSimulationValues(): Record<string, string> {
	const values: Record<string, string> = { kind: DEFAULT_KIND, reversed: '', label: '', ...DEFAULT_CONDITION_TEXT };
	for (const k of MODEL_KINDS) for (const f of k.fields) values[f.name] ??= f.initial;
	return values;
}

export function findModelKind(id: string | undefined): ModelKind | undefined {
	return MODEL_KINDS.find((k) => k.id === id);
}

export type ModelResult = { ok: true; model: DeviceModel } | { ok: false; fieldErrors: Record<string, string> };

const rangeText = (f: ModelField) => {
	const { min, max } = MODEL_LIMITS[f.limit];
	return `between ${formatSI(min, f.unit)} and ${formatSI(max, f.unit)}`;
};

/**
 * Builds the device model of `kind` from the typed values (the checkbox `reversed` is "on" when
 * ticked), and lets the engine's own `parseModel` check it. Each refusal is a sentence for the
 * field it concerns; one the fields cannot explain goes on `kind`.
 */
export function buildModel(kind: string | undefined, values: Readonly<Record<string, string | undefined>>): ModelResult {
	const def = findModelKind(kind);
	if (!def) return { ok: false, fieldErrors: { kind: 'Choose the part to simulate from the list.' } };
	const fieldErrors: Record<string, string> = {};
	const numbers: Record<string, number> = {};
	for (const f of def.fields) {
		const raw = (values[f.name] ?? '').trim();
		if (raw === '') {
			if (!f.optional) fieldErrors[f.name] = `Enter the ${f.label.toLowerCase()}, for example ${f.initial} (${f.unit}).`;
			continue;
		}
		const parsed = parseEngineering(raw, f.unit);
		if (parsed.ok) numbers[f.name] = parsed.value;
		else fieldErrors[f.name] = parsed.message;
	}
	if (Object.keys(fieldErrors).length > 0) return { ok: false, fieldErrors };
	const reversed = def.polarity === true && (values.reversed === 'on' || values.reversed === 'true');
	try {
		return { ok: true, model: parseModel(def.build(numbers, reversed)) };
	} catch (e) {
		if (!isSignatureError(e)) throw e;
		// The engine names the value it refused ("parts[1].ohms: …"): say it beside that field.
		const field = def.fields.find((f) => e.message.startsWith(`${f.path}:`));
		if (field) return { ok: false, fieldErrors: { [field.name]: `The ${field.label.toLowerCase()} must be ${rangeText(field)}.` } };
		const plain = plainError(e);
		return { ok: false, fieldErrors: { kind: [plain.sentence, plain.detail].filter(Boolean).join(' ') } };
	}
}

export type ConditionsResult = { ok: true; value: TestConditions } | { ok: false; fieldErrors: Record<string, string> };

/** The test conditions as typed (prefixes welcome: "1k"), checked against the engine's limits. */
export function readConditionText(text: { sourcePeakV?: string; sourceResistanceOhm?: string; frequencyHz?: string }): ConditionsResult {
	const fieldErrors: Record<string, string> = {};
	const numbers: Record<string, number> = {};
	const fields = [
		['sourcePeakV', 'V', 'Enter the source peak voltage in volts, for example 10.'],
		['sourceResistanceOhm', 'Ω', 'Enter the source resistance in ohms, for example 1k.'],
		['frequencyHz', 'Hz', 'Enter the test frequency in hertz, for example 60.']
	] as const;
	for (const [name, unit, empty] of fields) {
		const raw = (text[name] ?? '').trim();
		const parsed = parseEngineering(raw, unit);
		if (!parsed.ok) {
			fieldErrors[name] = raw === '' ? empty : parsed.message;
			continue;
		}
		const checked = testConditions.shape[name].safeParse(parsed.value);
		if (checked.success) numbers[name] = checked.data;
		else fieldErrors[name] = checked.error.issues[0].message;
	}
	if (Object.keys(fieldErrors).length === 0) {
		return { ok: true, value: { sourcePeakV: numbers.sourcePeakV, sourceResistanceOhm: numbers.sourceResistanceOhm, frequencyHz: numbers.frequencyHz } };
	}
	return { ok: false, fieldErrors };
}
