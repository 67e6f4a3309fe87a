import { db } from '../db';
import { config } from '../env';
import { backfillDescriptorTails } from '../traces/backfill';
import { MatchIndexes } from './registry';

export { rankTraces, type MatchFilters, type MatchResult } from './registry';

let indexes: MatchIndexes | undefined;

/** This process's match indexes; the first call starts listening for entry changes. */
export function matchIndexes(): MatchIndexes {
	if (!indexes) {
		indexes = new MatchIndexes(db, { maxBytes: 512 * 1024 * 1024 });
		const current = indexes;
		current.listen(config().DATABASE_URL).catch((e) => {
			// Without notifications an index could go stale: keep none loaded, and retry on the next call.
			console.error('match: cannot listen for entry changes:', e instanceof Error ? e.message : e);
			current.clear();
			indexes = undefined;
		});
		process.once('sveltekit:shutdown', () => void current.close());
	}
	return indexes;
}

/**
 * Fills the descriptor tails missing from traces stored before the column existed, in the
 * background; the indexes refresh through the NOTIFY each batch sends.
 */
export function startDescriptorTailBackfill(): void {
	backfillDescriptorTails(db)
		.then((n) => {
			if (n > 0) console.log(`match: computed the descriptor tail of ${n} older traces`);
		})
		.catch((e) => console.error('match: descriptor tail backfill failed (it runs again at the next start):', e instanceof Error ? e.message : e));
}
