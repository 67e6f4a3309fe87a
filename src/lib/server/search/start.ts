import { db } from '../db';
import { allEntryDocuments, loadEntryDocuments } from '../entries/documents';
import { config } from '../env';
import { searchClient, startSearchSync, type SearchSync } from './index';

let sync: SearchSync | undefined;

/**
 * Starts keeping the search index true for this process (once): rebuild from Postgres when the
 * index is new, then drain the outbox every second. Without MEILISEARCH_URL search is off and the
 * app says so once instead of failing every tick.
 */
export function startEntrySearchSync(): void {
	if (sync) return;
	if (!config().MEILISEARCH_URL) {
		console.warn('search: MEILISEARCH_URL is not set, so entries are not indexed (npm start sets it for you).');
		return;
	}
	sync = startSearchSync(db, searchClient(), {
		loadDocuments: (ids) => loadEntryDocuments(db, ids),
		allDocuments: () => allEntryDocuments(db)
	});
	process.once('sveltekit:shutdown', () => void sync?.stop());
}
