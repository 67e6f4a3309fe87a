import { describe, expect, it } from 'vitest';
import { parameterLines, residualText } from './analysis-text';

describe('analysis as text', () => {
	it('formats values with engineering prefixes (BIPM SI prefixes) in a fixed order', () => {
		const lines = parameterLines({
			parameters: {
				kneeV: { value: 0.62, unit: 'V' },
				resistanceOhm: { value: 2200, unit: 'Ω', uncertainty: 15 },
				capacitanceF: { unmeasurable: 'the curve shows no phase shift' }
			}
		});
		expect(lines.map((l) => l.label)).toEqual(['Resistance', 'Capacitance', 'Forward knee']);
		expect(lines[0].value).toBe('2.2 kΩ ± 15 Ω');
		expect(lines[1]).toMatchObject({ value: null, reason: 'the curve shows no phase shift' });
		expect(lines[2].value).toBe('620 mV');
	});

	it('leaves out an uncertainty too small to matter (below 0.1 % of the value)', () => {
		expect(parameterLines({ parameters: { kneeV: { value: 0.584, unit: 'V', uncertainty: 2.3e-9 } } })[0].value).toBe('584 mV');
	});

	it('names a junction polarity by probe', () => {
		expect(parameterLines({ parameters: { polarity: { value: 'anode-at-probe-1', unit: '' } } })[0].value).toBe('anode on the first probe');
	});

	it('gives the residual as a share of full scale', () => {
		expect(residualText(0.0042)).toBe('0.42 % of full scale');
		expect(residualText(0.125)).toBe('12.5 % of full scale');
	});
});
