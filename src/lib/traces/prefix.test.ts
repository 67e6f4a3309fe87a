import { describe, expect, it } from 'vitest';
import { parseEngineering } from './prefix';

// Prefix values from the BIPM SI Brochure (k = 10³, M = 10⁶, m = 10⁻³, µ = 10⁻⁶, n = 10⁻⁹, p = 10⁻¹²).
// The "4k7" / "4R7" notation (prefix letter in place of the decimal point) is IEC 60062's
// resistance and capacitance code; "u" for µ and "meg" for mega are common practice, no source.
function value(text: string): number {
	const r = parseEngineering(text);
	if (!r.ok) throw new Error(`${text}: ${r.message}`);
	return r.value;
}

describe('parseEngineering', () => {
	it.each([
		['4k7', 4700],
		['2.2u', 2.2e-6],
		['100n', 100e-9],
		['1M', 1e6],
		['1meg', 1e6],
		['1m', 1e-3],
		['4R7', 4.7],
		['2u2', 2.2e-6],
		['1M5', 1.5e6],
		['10p', 10e-12],
		['470', 470],
		['0.001', 0.001],
		['1e-6', 1e-6],
		['10 µF', 10e-6],
		['100nF', 100e-9],
		['4.7kΩ', 4700],
		['2.2 mH', 2.2e-3],
		['1,5k', 1500],
		[' 33 ', 33]
	])('%s → %d', (text, expected) => {
		expect(value(text)).toBeCloseTo(expected, 20);
		expect(value(text) / expected).toBeCloseTo(1, 12);
	});

	it.each(['', 'abc', '4k7k', 'k', '1..2', '--3', '4x7'])('refuses “%s” with a message', (text) => {
		const r = parseEngineering(text, 'Ω');
		expect(r.ok).toBe(false);
		if (!r.ok) expect(r.message).toMatch(text.trim() === '' ? /Enter a value in Ω/ : /4k7/);
	});

	it('keeps M (mega) and m (milli) apart', () => {
		expect(value('1M') / value('1m')).toBeCloseTo(1e9, 6);
	});
});
