/**
 * The app's search engine handle, from MEILISEARCH_URL / MEILISEARCH_KEY (`npm start` and
 * `npm test` point them at the local stand-in when no real engine is configured). Everything else
 * comes from ./engine and ./outbox, which take the handle explicitly.
 */
import { config } from '../env';
import { createSearchEngine, type SearchEngine } from './engine';

export * from './engine';
export * from './outbox';
export * from './sync';

let engine: SearchEngine | undefined;

/** The one engine handle of this process. Throws with a clear message when search is not configured. */
export function searchClient(): SearchEngine {
	if (engine) return engine;
	const { MEILISEARCH_URL, MEILISEARCH_KEY } = config();
	if (!MEILISEARCH_URL) {
		throw new Error('Search is not configured: set MEILISEARCH_URL (npm start starts a local stand-in and sets it for you).');
	}
	engine = createSearchEngine({ url: MEILISEARCH_URL, key: MEILISEARCH_KEY });
	return engine;
}
