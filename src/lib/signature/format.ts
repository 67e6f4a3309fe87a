import type { TestConditions } from './types';

const PREFIXES: [number, string][] = [
	[1e9, 'G'],
	[1e6, 'M'],
	[1e3, 'k'],
	[1, ''],
	[1e-3, 'm'],
	[1e-6, 'µ'],
	[1e-9, 'n'],
	[1e-12, 'p']
];

/**
 * The engineering prefix for a magnitude: the largest power of 10³ not above it (BIPM SI Brochure,
 * prefixes), with a little slack so 999.96 rounds up into the next prefix.
 */
export function engineeringPrefix(magnitude: number): { scale: number; prefix: string } {
	const abs = Math.abs(magnitude);
	const [scale, prefix] = PREFIXES.find(([s]) => abs >= s * 0.9995) ?? PREFIXES[PREFIXES.length - 1];
	return { scale, prefix };
}

/**
 * Formats a value in SI units with an engineering prefix and three significant figures,
 * e.g. `formatSI(2200, 'Ω')` → "2.2 kΩ", `formatSI(4.7e-7, 'F')` → "470 nF".
 */
export function formatSI(value: number, unit: string, digits = 3): string {
	if (!Number.isFinite(value)) return `${value} ${unit}`.trim();
	if (value === 0) return `0 ${unit}`.trim();
	const { scale, prefix } = engineeringPrefix(value);
	const scaled = value / scale;
	const text = Number(scaled.toPrecision(digits)).toString();
	return `${text} ${prefix}${unit}`.trim();
}

/** The conditions as the trade writes them: "10 V · 1 kΩ · 60 Hz". */
export function formatConditions(c: TestConditions): string {
	return [
		formatSI(c.sourcePeakV, 'V'),
		formatSI(c.sourceResistanceOhm, 'Ω'),
		formatSI(c.frequencyHz, 'Hz')
	].join(' · ');
}
