/**
 * Keeps the index true for the life of an app process: at start, apply the settings and rebuild
 * the index from the database when it is new (the local stand-in forgets on restart, and a
 * deleted index comes back empty); then drain the outbox every tick, re-checking the index first
 * so a search process that died and came back is rebuilt rather than silently half-empty.
 */
import type { Kysely } from 'kysely';
import type { Database } from '../db/connect';
import { ensureIndex, reindex, type EntryDocument, type SearchEngine } from './engine';
import { drainOutbox, type DrainResult, type LoadDocuments } from './outbox';

export interface SearchSyncOptions {
	loadDocuments: LoadDocuments;
	/** Every document, in batches, from the database: used to rebuild the index. */
	allDocuments: () => AsyncIterable<readonly EntryDocument[]>;
	intervalMs?: number;
	onError?: (message: string) => void;
}

export interface SearchSync {
	/** One check-and-drain now; what the timer runs. */
	runOnce(): Promise<{ rebuilt: boolean; drained: DrainResult }>;
	stop(): Promise<void>;
}

/**
 * A fresh index, or one whose settings had to be (re)applied, is rebuilt from the database: an
 * index re-created by a document write after the engine lost its data has default settings, so
 * this also catches an engine that restarted between two ticks.
 */
async function checkIndex(db: Kysely<Database>, engine: SearchEngine, options: SearchSyncOptions): Promise<boolean> {
	const { created, settingsUpdated } = await ensureIndex(engine);
	if (!created && !settingsUpdated) return false;
	await reindex(engine, options.allDocuments());
	return true;
}

export function startSearchSync(db: Kysely<Database>, engine: SearchEngine, options: SearchSyncOptions): SearchSync {
	let running: Promise<{ rebuilt: boolean; drained: DrainResult }> | undefined;
	let stopped = false;
	let lastError: string | undefined;
	const report = options.onError ?? ((m: string) => console.error(`search: ${m}`));

	const runOnce = () => {
		running ??= (async () => {
			try {
				const rebuilt = await checkIndex(db, engine, options);
				const drained = await drainOutbox(db, engine, { loadDocuments: options.loadDocuments });
				if (drained.error && drained.error !== lastError) report(drained.error);
				lastError = drained.error;
				return { rebuilt, drained };
			} catch (e) {
				const m = e instanceof Error ? e.message : String(e);
				// Logged once per distinct problem, not every tick.
				if (m !== lastError) report(m);
				lastError = m;
				return { rebuilt: false, drained: { applied: 0, failed: 0, deferred: 0, error: m } };
			} finally {
				running = undefined;
			}
		})();
		return running;
	};

	const timer = setInterval(() => {
		if (!stopped) void runOnce();
	}, options.intervalMs ?? 1_000);
	timer.unref();
	void runOnce();

	return {
		runOnce,
		async stop() {
			stopped = true;
			clearInterval(timer);
			await running;
		}
	};
}
