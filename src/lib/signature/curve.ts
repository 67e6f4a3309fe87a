import type { CanonicalCurve, TestConditions } from './types';

/**
 * Builds a canonical curve from one period already sampled uniformly in source phase from the
 * source's upward zero crossing (see `CanonicalCurve`), adding the normalised coordinates.
 */
export function toCanonical(
	v: ArrayLike<number>,
	i: ArrayLike<number>,
	conditions: TestConditions,
	meta: { periods: number; periodSpread: number | null; simulated: boolean }
): CanonicalCurve {
	const vs = conditions.sourcePeakV;
	const isc = vs / conditions.sourceResistanceOhm;
	const vArr = Array.from(v);
	const iArr = Array.from(i);
	return {
		conditions: { ...conditions },
		v: vArr,
		i: iArr,
		vn: vArr.map((x) => x / vs),
		in: iArr.map((x) => x / isc),
		...meta
	};
}
