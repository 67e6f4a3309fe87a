import { formatSI } from '../signature/format';
import type { Analysis, Parameter, ParameterName } from '../signature/types';

/** How each estimated parameter is named on screen. */
export const PARAMETER_LABELS: Readonly<Record<ParameterName, string>> = {
	resistanceOhm: 'Resistance',
	capacitanceF: 'Capacitance',
	leakageOhm: 'Parallel leakage',
	inductanceH: 'Inductance',
	seriesResistanceOhm: 'Series resistance',
	kneeV: 'Forward knee',
	reverseKneeV: 'Reverse knee',
	breakdownV: 'Breakdown',
	leakageA: 'Leakage current',
	polarity: 'Polarity'
};

export interface ParameterLine {
	name: ParameterName;
	label: string;
	/** The value with an engineering prefix, or null when it could not be measured. */
	value: string | null;
	/** Why it could not be measured, in the engine's words. */
	reason: string | null;
}

function valueText(p: Exclude<Parameter, { unmeasurable: string }>): string {
	if (typeof p.value === 'string') return p.value === 'anode-at-probe-1' ? 'anode on the first probe' : 'cathode on the first probe';
	const main = formatSI(p.value, p.unit);
	// An uncertainty below 0.1 % of the value (a simulated curve's, say) says nothing a technician needs.
	const telling = p.uncertainty !== undefined && p.uncertainty >= Math.abs(p.value) * 1e-3;
	return telling ? `${main} ± ${formatSI(p.uncertainty!, p.unit, 2)}` : main;
}

/** The analysis's parameters as lines a technician reads, in a fixed order. */
export function parameterLines(analysis: Pick<Analysis, 'parameters'>): ParameterLine[] {
	const out: ParameterLine[] = [];
	for (const name of Object.keys(PARAMETER_LABELS) as ParameterName[]) {
		const p = analysis.parameters[name];
		if (!p) continue;
		if ('unmeasurable' in p) out.push({ name, label: PARAMETER_LABELS[name], value: null, reason: p.unmeasurable });
		else out.push({ name, label: PARAMETER_LABELS[name], value: valueText(p), reason: null });
	}
	return out;
}

/** The residual as a percentage of full scale, e.g. "1.2 % of full scale". */
export function residualText(residual: number): string {
	return `${(residual * 100).toFixed(residual < 0.01 ? 2 : 1)} % of full scale`;
}
