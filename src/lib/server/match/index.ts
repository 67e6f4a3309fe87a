import { db } from '../db';
import { config } from '../env';
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
