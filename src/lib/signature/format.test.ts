import { describe, expect, it } from 'vitest';
import { formatConditions, formatSI } from './format';

// Engineering prefixes are the SI prefixes in steps of 10³ (BIPM SI Brochure, table 7).
describe('formatSI', () => {
	it.each([
		[2200, 'Ω', '2.2 kΩ'],
		[4.7e-7, 'F', '470 nF'],
		[1e-3, 'A', '1 mA'],
		[0.65, 'V', '650 mV'],
		[10e6, 'Ω', '10 MΩ'],
		[-2.65e-3, 'A', '-2.65 mA'],
		[0, 'V', '0 V'],
		[999.96, 'Hz', '1 kHz']
	])('formats %d %s as %s', (value, unit, expected) => {
		expect(formatSI(value, unit)).toBe(expected);
	});
});

describe('formatConditions', () => {
	it('writes the conditions by value, separated by middle dots', () => {
		expect(
			formatConditions({ sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 })
		).toBe('10 V · 1 kΩ · 60 Hz');
	});
});
