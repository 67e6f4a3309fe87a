import { describe, expect, it } from 'vitest';
import { candidatesFor, MAX_CANDIDATES, MIN_CANDIDATES } from './registry';

describe('how many candidates are compared exactly', () => {
	it('grows with the library and stays within its bounds', () => {
		expect(candidatesFor(0, 10)).toBe(MIN_CANDIDATES);
		expect(candidatesFor(100_000, 10)).toBe(128);
		expect(candidatesFor(1_000_000, 10)).toBe(1280);
		expect(candidatesFor(1e9, 10)).toBe(MAX_CANDIDATES);
		// Never fewer than a few per result asked for.
		expect(candidatesFor(10, 50)).toBe(150);
	});
});
