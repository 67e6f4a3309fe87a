import { formatSI } from '../signature/format';
import type { Analysis, ParameterName, SignatureClass } from '../signature/types';

/** A signature class as a technician says it. */
export const CLASS_NAMES: Readonly<Record<SignatureClass, string>> = {
	open: 'Open',
	short: 'Short',
	resistive: 'Resistive',
	capacitive: 'Capacitive',
	inductive: 'Inductive',
	junction: 'Junction (diode-like)',
	zener: 'Zener (breakdown)',
	complex: 'Complex'
};

const PARAMETER_NAMES: Readonly<Record<ParameterName, string>> = {
	resistanceOhm: 'Resistance',
	capacitanceF: 'Capacitance',
	leakageOhm: 'Leakage resistance',
	inductanceH: 'Inductance',
	seriesResistanceOhm: 'Series resistance',
	kneeV: 'Knee voltage',
	reverseKneeV: 'Reverse knee voltage',
	breakdownV: 'Breakdown voltage',
	leakageA: 'Leakage current',
	polarity: 'Polarity'
};

export function className(c: string): string {
	return (CLASS_NAMES as Record<string, string>)[c] ?? c;
}

/** The analysis' parameters as label/value lines, in a fixed order; unmeasurable ones say why. */
export function parameterLines(a: Pick<Analysis, 'parameters'>): { name: string; value: string }[] {
	const out: { name: string; value: string }[] = [];
	for (const key of Object.keys(PARAMETER_NAMES) as ParameterName[]) {
		const p = a.parameters[key];
		if (!p) continue;
		let value: string;
		if ('unmeasurable' in p) value = `not measurable here (${p.unmeasurable})`;
		else if (typeof p.value === 'string') value = p.value === 'anode-at-probe-1' ? 'anode at probe 1' : 'cathode at probe 1';
		else value = formatSI(p.value, p.unit) + (p.uncertainty ? ` ± ${formatSI(p.uncertainty, p.unit, 2)}` : '');
		out.push({ name: PARAMETER_NAMES[key], value });
	}
	return out;
}

/** The fit residual as a percentage of full scale, e.g. "0.4 %". */
export function formatResidual(residual: number): string {
	const percent = residual * 100;
	if (percent < 0.01) return 'under 0.01 % of full scale';
	return `${Number(percent.toPrecision(2))} % of full scale`;
}
