import { describe, expect, it } from 'vitest';
import { candidatesFor, exactPool, MAX_CANDIDATES, MIN_CANDIDATES } from './registry';

describe('how many candidates are compared exactly', () => {
	it('grows with the library and stays within its bounds', () => {
		expect(candidatesFor(0, 10)).toBe(MIN_CANDIDATES);
		expect(candidatesFor(100_000, 10)).toBe(128);
		expect(candidatesFor(1_000_000, 10)).toBe(1280);
		expect(candidatesFor(1e9, 10)).toBe(MAX_CANDIDATES);
		// Never fewer than a few per result asked for.
		expect(candidatesFor(10, 50)).toBe(150);
	});

	it('drops incomparable candidates only when enough comparable ones can fill the results', () => {
		const near = Array.from({ length: 3 }, (_, k) => ({ id: `n${k}`, comparable: true }));
		const far = Array.from({ length: 3 }, (_, k) => ({ id: `f${k}`, comparable: false }));
		const all = [...near, ...far];
		// Results list comparable conditions first: with 3 comparable candidates, a top 3 has no room
		// for an incomparable one, a top 4 has.
		expect(exactPool(all, 3)).toEqual(near);
		expect(exactPool(all, 4)).toEqual(all);
		expect(exactPool(far, 1)).toEqual(far);
	});
});
