import { describe, expect, it } from 'vitest';
import { compareUntilSettled, EXACT_BATCH, MIN_EXACT } from './rerank';

interface Fake {
	id: number;
	score: number;
	exact: number | undefined;
}

/** Candidates nearest score first, with an exact distance given by `exactOf(score, id)`. */
function candidates(n: number, exactOf: (score: number, id: number) => number | undefined): Fake[] {
	return Array.from({ length: n }, (_, id) => {
		const score = 0.01 + id * 0.001;
		return { id, score, exact: exactOf(score, id) };
	});
}

async function run(list: Fake[], need: number) {
	let calls = 0;
	const done = await compareUntilSettled(
		list,
		need,
		(c) => c.score,
		(batch) => {
			calls++;
			return batch.map((c) => c.exact);
		}
	);
	return { done, calls, ids: done.map((d) => d.candidate.id) };
}

const top = (xs: { candidate: Fake; distance: number }[], n: number) =>
	[...xs]
		.sort((a, b) => a.distance - b.distance)
		.slice(0, n)
		.map((x) => x.candidate.id);

describe('compareUntilSettled', () => {
	it('stops early when the exact distance follows the score, and still finds the true best', async () => {
		// exact² = score² + a constant (the query's own tail): the score order is the exact order.
		const list = candidates(200, (s) => Math.sqrt(s * s + 4e-4));
		const { done, ids } = await run(list, 10);
		expect(done.length).toBeLessThanOrEqual(Math.max(MIN_EXACT, 10) + EXACT_BATCH);
		expect(done.length).toBeGreaterThanOrEqual(10);
		expect(top(done, 10)).toEqual(ids.slice(0, 10));
		expect(top(done, 10)).toEqual(list.slice(0, 10).map((c) => c.id));
	});

	it('keeps comparing as far as the residuals seen so far say an exact distance can fall below its score', async () => {
		// Scores 0.05, 0.0502, …; candidate 40's exact distance² lies 7e-4 below its score², which puts
		// it among the ten best. Whether the loop reaches it depends on what it has seen on the way.
		const score = (id: number) => 0.05 + 0.0002 * id;
		const withDrop = (drops: Record<number, number>) =>
			Array.from({ length: 200 }, (_, id) => ({ id, score: score(id), exact: Math.sqrt(score(id) ** 2 - (drops[id] ?? 0)) }));
		// Candidate 2 drops by 6e-4: the margin becomes 6e-4 + half the spread, and candidate 40 is reached.
		const warned = await run(withDrop({ 2: 6e-4, 40: 7e-4 }), 10);
		expect(top(warned.done, 10)).toContain(40);
		// Without that warning every residual seen is 0, the loop stops after the first batches and
		// candidate 40 is missed: the rule trusts what it has measured, no more.
		const unwarned = await run(withDrop({ 40: 7e-4 }), 10);
		expect(unwarned.done.map((d) => d.candidate.id)).not.toContain(40);
		expect(unwarned.done.length).toBeLessThan(warned.done.length);
	});

	it('compares everything when fewer candidates exist than are needed', async () => {
		const list = candidates(5, (s) => s);
		const { done, calls } = await run(list, 10);
		expect(done).toHaveLength(5);
		expect(calls).toBe(1);
	});

	it('passes over candidates that can no longer be compared and fills the need from the rest', async () => {
		const list = candidates(40, (s, id) => (id % 2 === 0 ? undefined : s));
		const { done } = await run(list, 10);
		expect(done.every((d) => d.candidate.id % 2 === 1)).toBe(true);
		expect(top(done, 10)).toEqual([1, 3, 5, 7, 9, 11, 13, 15, 17, 19]);
	});

	it('compares nothing when nothing is needed and nothing is there', async () => {
		expect((await run([], 10)).calls).toBe(0);
	});
});
