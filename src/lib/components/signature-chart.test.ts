import { describe, expect, it } from 'vitest';
import { curveDash, ROLE_COLOUR, type PlotCurve } from './signature-chart';

const curve = (role: PlotCurve['role'], label: string): PlotCurve => ({ role, label, v: [], i: [] });

describe('curve styles', () => {
	it('colours each role from its own palette token', () => {
		expect(new Set(Object.values(ROLE_COLOUR)).size).toBe(4);
		expect(ROLE_COLOUR.fault).toBe('--cl-trace-fault');
		expect(ROLE_COLOUR['known-good']).toBe('--cl-trace-good');
		expect(ROLE_COLOUR.other).toBe('--cl-trace-other');
	});

	it('draws the first curve of a stored role solid and the query dashed', () => {
		const curves = [curve('fault', 'a'), curve('query', 'q')];
		expect(curveDash(curves, 0)).toEqual([]);
		expect(curveDash(curves, 1)).not.toEqual([]);
	});

	it('tells two curves of the same role apart by dash', () => {
		const curves = [curve('known-good', 'board A'), curve('fault', 'x'), curve('known-good', 'board B')];
		expect(curveDash(curves, 2)).not.toEqual(curveDash(curves, 0));
	});
});
