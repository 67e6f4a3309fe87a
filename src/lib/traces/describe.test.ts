import { describe, expect, it } from 'vitest';
import { formatResidual, parameterLines } from './describe';

describe('analysis wording', () => {
	it('gives parameters with engineering prefixes and says why one is not measurable', () => {
		const lines = parameterLines({
			parameters: {
				resistanceOhm: { value: 4700, unit: 'Ω' },
				capacitanceF: { unmeasurable: 'Xc is far above Rs' },
				polarity: { value: 'cathode-at-probe-1', unit: '' }
			}
		});
		expect(lines).toEqual([
			{ name: 'Resistance', value: '4.7 kΩ' },
			{ name: 'Capacitance', value: 'not measurable here (Xc is far above Rs)' },
			{ name: 'Polarity', value: 'cathode at probe 1' }
		]);
	});

	it('writes the residual as a percentage of full scale, without noise digits for a perfect fit', () => {
		expect(formatResidual(0.0625)).toBe('6.3 % of full scale');
		expect(formatResidual(2.2e-16)).toBe('under 0.01 % of full scale');
	});
});
