/**
 * The search outbox on the real Postgres with the local stand-in as the engine. The "entries" are
 * rows this test writes into app_meta (a real table), each with its outbox row in the same
 * transaction, and the loader reads them back: test data, not a stand-in for the entries feature.
 * What must hold (common practice for a transactional outbox, no source): the index ends equal to
 * the database whatever fails in between, and one entity's changes are never applied out of order.
 */
import { sql, type Kysely } from 'kysely';
import { afterAll, afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { EntryDocument } from '../../search/settings';
import { startStandin, type Standin } from '../../search/standin/server';
import type { Database } from '../../src/lib/server/db/connect';
import { createSearchEngine, deleteAllDocuments, ensureIndex, indexDocuments, reindex, type SearchEngine } from '../../src/lib/server/search/engine';
import { backoffDelayMs, drainOutbox, enqueueSearchUpdate, indexLag, type LoadDocuments } from '../../src/lib/server/search/outbox';
import { startSearchSync } from '../../src/lib/server/search/sync';
import { ORG_A, ORG_B, entryDoc } from './search-fixtures';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());

const KEY_PREFIX = 'search-test-entry:';

/** Writes (or rewrites) an entry row and its outbox row in one transaction. */
async function writeEntry(doc: EntryDocument, trx?: Kysely<Database>): Promise<void> {
	const run = async (t: Kysely<Database>) => {
		await t
			.insertInto('appMeta')
			.values({ key: KEY_PREFIX + doc.id, value: JSON.stringify(doc) })
			.onConflict((oc) => oc.column('key').doUpdateSet({ value: JSON.stringify(doc), updatedAt: new Date() }))
			.execute();
		await enqueueSearchUpdate(t, doc.orgId, doc.id, 'upsert');
	};
	if (trx) return run(trx);
	await db.transaction().execute(run);
}

async function removeEntry(orgId: string, id: string): Promise<void> {
	await db.transaction().execute(async (trx) => {
		await trx.deleteFrom('appMeta').where('key', '=', KEY_PREFIX + id).execute();
		await enqueueSearchUpdate(trx, orgId, id, 'delete');
	});
}

const loadDocuments: LoadDocuments = async (ids) => {
	if (ids.length === 0) return [];
	const rows = await db.selectFrom('appMeta').select('value').where('key', 'in', ids.map((id) => KEY_PREFIX + id)).execute();
	return rows.map((r) => r.value as unknown as EntryDocument);
};

async function* sourceBatches(size = 2): AsyncIterable<EntryDocument[]> {
	for (let offset = 0; ; offset += size) {
		const rows = await db.selectFrom('appMeta').select('value').where('key', 'like', `${KEY_PREFIX}%`).orderBy('key').limit(size).offset(offset).execute();
		if (rows.length === 0) return;
		yield rows.map((r) => r.value as unknown as EntryDocument);
	}
}

/** Every document in the index, by id. */
async function indexed(engine: SearchEngine): Promise<EntryDocument[]> {
	const page = await engine.client.index<EntryDocument>(engine.index).getDocuments({ limit: 1000 });
	return [...page.results].sort((a, b) => (a.id < b.id ? -1 : 1));
}

async function sourceDocs(): Promise<EntryDocument[]> {
	const all: EntryDocument[] = [];
	for await (const b of sourceBatches(100)) all.push(...b);
	return all.sort((a, b) => (a.id < b.id ? -1 : 1));
}

const outboxRows = () => db.selectFrom('searchOutbox').selectAll().orderBy('id').execute();

let standin: Standin;
let engine: SearchEngine;

beforeEach(async () => {
	await truncateAll(db);
	standin = await startStandin({ masterKey: 'outbox-test-key' });
	engine = createSearchEngine({ url: standin.url, key: 'outbox-test-key', timeout: 3000 });
	await ensureIndex(engine);
});
afterEach(async () => {
	await standin.close().catch(() => undefined);
});

describe('enqueueSearchUpdate', () => {
	it('writes the outbox row in the writer’s transaction, and a rollback writes neither', async () => {
		await writeEntry(entryDoc('kept', { title: 'Kept' }));
		await expect(
			db.transaction().execute(async (trx) => {
				await writeEntry(entryDoc('rolled-back', { title: 'Gone' }), trx);
				throw new Error('writer failed after its writes');
			})
		).rejects.toThrow('writer failed');
		const rows = await outboxRows();
		expect(rows.map((r) => [r.entityId, r.op, r.attempts, r.doneAt])).toEqual([['kept', 'upsert', 0, null]]);
		expect(await loadDocuments(['kept', 'rolled-back'])).toHaveLength(1);
	});

	it('refuses an op other than upsert or delete at the database level', async () => {
		await expect(db.insertInto('searchOutbox').values({ orgId: ORG_A, entityId: 'x', op: 'merge' }).execute()).rejects.toMatchObject({ code: '23514' });
	});
});

describe('drainOutbox', () => {
	it('applies every change in order, so the index ends equal to the database', async () => {
		await writeEntry(entryDoc('a', { title: 'First version' }));
		await writeEntry(entryDoc('b', { title: 'Soon deleted' }));
		await writeEntry(entryDoc('a', { title: 'Second version' }));
		await removeEntry(ORG_A, 'b');
		await writeEntry(entryDoc('c', { orgId: ORG_B, title: 'Other organisation' }));
		const result = await drainOutbox(db, engine, { loadDocuments, batchSize: 2 });
		expect(result).toEqual({ applied: 5, failed: 0, deferred: 0 });
		expect(await indexed(engine)).toEqual(await sourceDocs());
		expect((await indexed(engine)).map((d) => d.title)).toEqual(['Second version', 'Other organisation']);
		expect((await outboxRows()).every((r) => r.doneAt !== null)).toBe(true);
		expect(await indexLag(db)).toMatchObject({ pending: 0, failing: 0, lagSeconds: 0, oldestPendingAt: null });
	});

	it('retries with exponential backoff while the engine is down, and the document arrives after it is back', async () => {
		const port = standin.port;
		await standin.close();
		await writeEntry(entryDoc('late', { title: 'Written while search was down' }));
		// A clock a minute ahead, so the row written just now is due; then stepped by hand.
		const t0 = new Date(Date.now() + 60_000);
		const at = (ms: number) => () => new Date(t0.getTime() + ms);

		const first = await drainOutbox(db, engine, { loadDocuments, now: at(0) });
		expect(first).toMatchObject({ applied: 0, failed: 1 });
		expect(first.error).toMatch(/not reachable/);
		let [row] = await outboxRows();
		expect(row.attempts).toBe(1);
		expect(row.nextAttemptAt.getTime()).toBe(t0.getTime() + backoffDelayMs(1));
		expect(row.lastError).toMatch(/not reachable/);
		expect(await indexLag(db, at(0)())).toMatchObject({ pending: 1, failing: 1, lastError: expect.stringMatching(/not reachable/) });

		// Not due yet: nothing is tried.
		expect(await drainOutbox(db, engine, { loadDocuments, now: at(500) })).toEqual({ applied: 0, failed: 0, deferred: 0 });
		// Due, still down: the wait doubles.
		expect(await drainOutbox(db, engine, { loadDocuments, now: at(1000) })).toMatchObject({ failed: 1 });
		[row] = await outboxRows();
		expect(row.attempts).toBe(2);
		expect(row.nextAttemptAt.getTime() - (t0.getTime() + 1000)).toBe(2 * backoffDelayMs(1));

		// Back on the same address, empty (the stand-in forgets): the index is re-created, the row applied.
		standin = await startStandin({ port, masterKey: 'outbox-test-key' });
		expect(await ensureIndex(engine)).toMatchObject({ created: true });
		expect(await drainOutbox(db, engine, { loadDocuments, now: at(3000) })).toEqual({ applied: 1, failed: 0, deferred: 0 });
		expect((await indexed(engine)).map((d) => d.title)).toEqual(['Written while search was down']);
	});

	it('loses nothing when the search process dies between commit and drain: reindex plus drain restore everything', async () => {
		await writeEntry(entryDoc('before', { title: 'Indexed before the crash' }));
		await drainOutbox(db, engine, { loadDocuments });
		await writeEntry(entryDoc('pending', { title: 'Committed, not yet drained' }));
		// The process is killed: everything in memory is gone. A new one starts elsewhere.
		await standin.close();
		standin = await startStandin({ masterKey: 'outbox-test-key' });
		engine = createSearchEngine({ url: standin.url, key: 'outbox-test-key' });
		const { created } = await ensureIndex(engine);
		expect(created).toBe(true);
		await reindex(engine, sourceBatches());
		await drainOutbox(db, engine, { loadDocuments });
		expect(await indexed(engine)).toEqual(await sourceDocs());
		expect((await indexed(engine)).map((d) => d.id)).toEqual(['before', 'pending']);
	});

	it('holds back later changes to an entity whose earlier row another drainer has locked, and applies others', async () => {
		await writeEntry(entryDoc('x', { title: 'x one' }));
		await writeEntry(entryDoc('y', { title: 'y one' }));
		await writeEntry(entryDoc('x', { title: 'x two' }));
		const [xFirst] = await outboxRows();
		let locked!: () => void;
		let release!: () => void;
		const isLocked = new Promise<void>((r) => (locked = r));
		const released = new Promise<void>((r) => (release = r));
		// Another instance is busy with x's first row.
		const other = db.transaction().execute(async (trx) => {
			await sql`select id from search_outbox where id = ${xFirst.id} for update`.execute(trx);
			locked();
			await released;
		});
		await isLocked;
		const meanwhile = await drainOutbox(db, engine, { loadDocuments });
		expect(meanwhile).toMatchObject({ applied: 1, deferred: 1 });
		expect((await indexed(engine)).map((d) => d.id)).toEqual(['y']);
		release();
		await other;
		expect(await drainOutbox(db, engine, { loadDocuments })).toMatchObject({ applied: 2, deferred: 0 });
		expect((await indexed(engine)).map((d) => d.title)).toEqual(['x two', 'y one']);
	});

	it('keeps a document the engine rejects waiting alone, while the rest of its batch is applied', async () => {
		await writeEntry(entryDoc('fine', { title: 'Fine' }));
		await writeEntry(entryDoc('not valid!', { title: 'Id the engine refuses' }));
		const result = await drainOutbox(db, engine, { loadDocuments });
		expect(result).toMatchObject({ applied: 1, failed: 1 });
		expect(result.error).toMatch(/invalid_document_id/);
		const rows = await outboxRows();
		expect(rows.find((r) => r.entityId === 'fine')?.doneAt).not.toBeNull();
		expect(rows.find((r) => r.entityId === 'not valid!')).toMatchObject({ doneAt: null, attempts: 1 });
		expect((await indexed(engine)).map((d) => d.id)).toEqual(['fine']);
	});

	it('refuses a document that loads under another organisation than its row', async () => {
		await db.transaction().execute(async (trx) => {
			await trx.insertInto('appMeta').values({ key: KEY_PREFIX + 'mixed', value: JSON.stringify(entryDoc('mixed', { orgId: ORG_B })) }).execute();
			await enqueueSearchUpdate(trx, ORG_A, 'mixed', 'upsert');
		});
		const result = await drainOutbox(db, engine, { loadDocuments });
		expect(result).toMatchObject({ applied: 0, failed: 1 });
		expect(await indexed(engine)).toEqual([]);
	});
});

describe('reindex', () => {
	it('from the database equals the incremental state, and removes what the database no longer has', async () => {
		for (const [i, kind] of ['capacitor', 'zener', 'resistor', 'diode', 'ic-pin'].entries()) {
			await writeEntry(entryDoc(`e${i}`, { title: `Entry ${i}`, componentKind: kind, updatedAt: 1000 + i }));
		}
		await writeEntry(entryDoc('e1', { title: 'Entry 1, edited' }));
		await removeEntry(ORG_A, 'e3');
		await drainOutbox(db, engine, { loadDocuments });
		const incremental = await indexed(engine);
		expect(incremental.map((d) => d.id)).toEqual(['e0', 'e1', 'e2', 'e4']);

		await deleteAllDocuments(engine);
		await indexDocuments(engine, [entryDoc('stray', { title: 'Not in the database' })]);
		let progress = 0;
		const result = await reindex(engine, sourceBatches(2), (n) => (progress = n));
		expect(result).toEqual({ indexed: 4, removed: 1 });
		expect(progress).toBe(4);
		expect(await indexed(engine)).toEqual(incremental);
	});
});

describe('startSearchSync', () => {
	it('rebuilds a new index from the database, drains, and rebuilds again after the engine lost everything', async () => {
		await writeEntry(entryDoc('s1', { title: 'Written before the app started' }));
		await drainOutbox(db, engine, { loadDocuments });
		const port = standin.port;
		// The engine restarts empty before the app starts.
		await standin.close();
		standin = await startStandin({ port, masterKey: 'outbox-test-key' });
		const errors: string[] = [];
		const sync = startSearchSync(db, engine, { loadDocuments, allDocuments: () => sourceBatches(), intervalMs: 3_600_000, onError: (m) => errors.push(m) });
		try {
			expect((await sync.runOnce()).rebuilt).toBe(true);
			expect((await indexed(engine)).map((d) => d.id)).toEqual(['s1']);

			await writeEntry(entryDoc('s2', { title: 'Written while running' }));
			expect(await sync.runOnce()).toMatchObject({ rebuilt: false, drained: { applied: 1 } });

			// Killed and back while the app runs: the next tick notices and rebuilds.
			await standin.close();
			await writeEntry(entryDoc('s3', { title: 'Written while search was down' }));
			expect((await sync.runOnce()).drained.error).toMatch(/not reachable/);
			standin = await startStandin({ port, masterKey: 'outbox-test-key' });
			await sync.runOnce();
			await sync.runOnce();
			expect(await indexed(engine)).toEqual(await sourceDocs());
			expect((await indexed(engine)).map((d) => d.id)).toEqual(['s1', 's2', 's3']);
			expect(errors).toHaveLength(1);
		} finally {
			await sync.stop();
		}
	});
});

describe('backoffDelayMs', () => {
	it('doubles from one second and stops at ten minutes (common practice, no source)', () => {
		expect([0, 1, 2, 3, 4].map(backoffDelayMs)).toEqual([0, 1000, 2000, 4000, 8000]);
		expect(backoffDelayMs(30)).toBe(600_000);
	});
});
