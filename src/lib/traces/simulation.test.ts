import { describe, expect, it } from 'vitest';
import { analyse } from '../signature/analyse';
import { simulate } from '../signature/simulate';
import { buildModel, initialSimulationValues, MODEL_KINDS, readConditionText, SIMULATION_FIELDS } from './simulation';

const bench = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

describe('the parts the simulation picker offers', () => {
	it('start from example values the engine accepts, each reading as its own class', () => {
		// What each part looks like on a tester is a fact of the trade (common practice, no source):
		// a resistor a slope, a capacitor or inductor an ellipse, a diode a knee, a zener two knees.
		const expected: Record<string, string> = {
			resistor: 'resistive',
			capacitor: 'capacitive',
			'leaky-capacitor': 'capacitive',
			inductor: 'inductive',
			winding: 'inductive',
			diode: 'junction',
			zener: 'zener',
			open: 'open',
			short: 'short'
		};
		const values = initialSimulationValues();
		expect(MODEL_KINDS.map((k) => k.id).sort()).toEqual(Object.keys(expected).sort());
		for (const kind of MODEL_KINDS) {
			const built = buildModel(kind.id, values);
			if (!built.ok) throw new Error(`${kind.id}: ${JSON.stringify(built.fieldErrors)}`);
			expect(analyse(simulate(built.model, bench)).class, kind.id).toBe(expected[kind.id]);
		}
	});

	it('reads values with prefixes into the device model', () => {
		expect(buildModel('resistor', { ohms: '4k7' })).toEqual({ ok: true, model: { kind: 'resistor', ohms: 4700 } });
		const leaky = buildModel('leaky-capacitor', { farads: '2.2u', leakageOhms: '1M' });
		expect(leaky.ok && leaky.model).toEqual({ kind: 'parallel', parts: [{ kind: 'capacitor', farads: 2.2e-6 }, { kind: 'resistor', ohms: 1e6 }] });
		const winding = buildModel('winding', { windingHenries: '1.5', windingOhms: '4R7' });
		expect(winding.ok && winding.model).toEqual({ kind: 'series', parts: [{ kind: 'inductor', henries: 1.5 }, { kind: 'resistor', ohms: 4.7 }] });
		expect(buildModel('zener', { bv: '12', seriesOhms: '10', reversed: 'on' })).toEqual({ ok: true, model: { kind: 'diode', bv: 12, rs: 10, reversed: true } });
		// The polarity box belongs to diodes only.
		expect(buildModel('resistor', { ohms: '100', reversed: 'on' })).toEqual({ ok: true, model: { kind: 'resistor', ohms: 100 } });
	});

	it('refuses each bad value with a sentence beside its field', () => {
		expect(buildModel('resistor', { ohms: '' })).toEqual({ ok: false, fieldErrors: { ohms: 'Enter the resistance, for example 4k7 (Ω).' } });
		expect(buildModel('capacitor', { farads: '4x7' })).toEqual({ ok: false, fieldErrors: { farads: '“4x7” is not a value. Write it like 4k7, 2.2u, 100n or 0.001 (F).' } });
		// The engine's own range (MODEL_LIMITS), refused by its parseModel and said in words.
		expect(buildModel('resistor', { ohms: '1000G' })).toEqual({ ok: false, fieldErrors: { ohms: 'The resistance must be between 1 mΩ and 100 GΩ.' } });
		expect(buildModel('leaky-capacitor', { farads: '1u', leakageOhms: '0' })).toEqual({
			ok: false,
			fieldErrors: { leakageOhms: 'The leakage resistance must be between 1 mΩ and 100 GΩ.' }
		});
		expect(buildModel('diode', { seriesOhms: '-1' })).toEqual({ ok: false, fieldErrors: { seriesOhms: 'The series resistance must be between 0 Ω and 1 MΩ.' } });
		expect(buildModel('bogus', {})).toEqual({ ok: false, fieldErrors: { kind: 'Choose the part to simulate from the list.' } });
	});

	it('names every field the form sends', () => {
		for (const k of MODEL_KINDS) for (const f of k.fields) expect(SIMULATION_FIELDS).toContain(f.name);
		expect(SIMULATION_FIELDS).toEqual(expect.arrayContaining(['kind', 'reversed', 'label', 'sourcePeakV', 'sourceResistanceOhm', 'frequencyHz']));
	});
});

describe('test conditions as typed', () => {
	it('takes prefixes', () => {
		expect(readConditionText({ sourcePeakV: '8.9', sourceResistanceOhm: '4k7', frequencyHz: '1k' })).toEqual({
			ok: true,
			value: { sourcePeakV: 8.9, sourceResistanceOhm: 4700, frequencyHz: 1000 }
		});
	});

	it('reports every bad field at once', () => {
		expect(readConditionText({ sourcePeakV: '', sourceResistanceOhm: 'abc', frequencyHz: '0' })).toEqual({
			ok: false,
			fieldErrors: {
				sourcePeakV: 'Enter the source peak voltage in volts, for example 10.',
				sourceResistanceOhm: '“abc” is not a value. Write it like 4k7, 2.2u, 100n or 0.001 (Ω).',
				frequencyHz: 'Frequency must be at least 1 Hz.'
			}
		});
	});
});
