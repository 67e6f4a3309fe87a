/**
 * Exact re-ranking of descriptor candidates, stopping as soon as the rest cannot matter.
 *
 * The index's score (descriptor distance² plus the trace's tail²) differs from the exact distance²
 * by an offset that is nearly the same for every candidate of one query (the query's own tail) and
 * a residual that is not: the correlation between two curves' harmonics beyond the descriptor,
 * which for noisy captures is random and for curves with sharp knees is systematic. Neither is
 * known before the exact distance is computed — but once a few candidates have been compared, the
 * residuals seen so far say how far an unseen candidate's exact distance can fall below what its
 * score suggests. Candidates are compared in score order, in batches, and the loop stops when the
 * next score, moved by the lowest residual seen less a safety share of their spread, can no longer
 * beat the `need`-th best exact distance found. The candidate count from the index stays the upper
 * bound; in a dense library most queries stop well before it (measured by `npm run bench -- match`).
 */

/** Fewest candidates compared exactly before the stopping rule may apply. */
export const MIN_EXACT = 12;
/** Candidates compared per batch (in the app: one database round trip for their curves). */
export const EXACT_BATCH = 8;
/**
 * Share of the residuals' spread kept as a margin below the lowest residual. 0.5 holds recall@10 at
 * 1.000 on the benchmark's libraries; 0 loses about 3 % of the true top ten at 100 000 traces.
 */
export const RESIDUAL_SAFETY = 0.5;

export interface Scored<C> {
	candidate: C;
	/** Exact shape distance. */
	distance: number;
}

/**
 * Compares `candidates` (nearest descriptor score first; `scoreOf` gives the score as a distance)
 * until the best `need` exact distances are settled, and returns every candidate compared, in the
 * order compared. `exact` compares one batch and returns one distance per candidate, or undefined
 * for a candidate that can no longer be compared (its trace was deleted meanwhile).
 */
export async function compareUntilSettled<C>(
	candidates: readonly C[],
	need: number,
	scoreOf: (c: C) => number,
	exact: (batch: C[]) => Promise<(number | undefined)[]> | (number | undefined)[]
): Promise<Scored<C>[]> {
	const done: Scored<C>[] = [];
	const best: number[] = []; // the `need` smallest exact distances², ascending
	let lowest = Infinity;
	let highest = -Infinity;
	let next = 0;
	const settled = () => {
		if (done.length < Math.max(need, MIN_EXACT) || best.length < need) return false;
		const margin = lowest - RESIDUAL_SAFETY * (highest - lowest);
		return scoreOf(candidates[next]) ** 2 + margin > best[need - 1];
	};
	while (next < candidates.length && !settled()) {
		const batch = candidates.slice(next, next + EXACT_BATCH);
		next += batch.length;
		const distances = await exact(batch);
		batch.forEach((candidate, k) => {
			const distance = distances[k];
			if (distance === undefined) return;
			done.push({ candidate, distance });
			const residual = distance ** 2 - scoreOf(candidate) ** 2;
			lowest = Math.min(lowest, residual);
			highest = Math.max(highest, residual);
			insertBounded(best, distance ** 2, need);
		});
	}
	return done;
}

/** Inserts x into the ascending array `xs`, keeping at most `max` of the smallest. */
function insertBounded(xs: number[], x: number, max: number): void {
	if (max <= 0 || (xs.length >= max && x >= xs[xs.length - 1])) return;
	let k = xs.length;
	while (k > 0 && xs[k - 1] > x) k--;
	xs.splice(k, 0, x);
	if (xs.length > max) xs.pop();
}
