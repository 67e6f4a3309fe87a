/**
 * The search outbox with real entries: written through the entries service, read back by the
 * entries' document loader. What must hold (common practice for a transactional outbox, no
 * source): a change that committed reaches the index even when the app dies before draining it,
 * and a rebuild from Postgres equals the state the incremental drains reached.
 */
import { randomBytes } from 'node:crypto';
import { afterAll, afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { EntryDocument } from '../../search/settings';
import { startStandin, type Standin } from '../../search/standin/server';
import { entryCreate } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import { ensureUser } from '../../src/lib/server/auth/users';
import { allEntryDocuments, loadEntryDocuments } from '../../src/lib/server/entries/documents';
import { recordEntryView, setHelped } from '../../src/lib/server/entries/helped';
import { createEntry, deleteEntry, transitionEntry, updateEntry } from '../../src/lib/server/entries/service';
import { createOrganisation } from '../../src/lib/server/orgs/members';
import { createSearchEngine, ensureIndex, reindex, type SearchEngine } from '../../src/lib/server/search/engine';
import { drainOutbox, indexLag } from '../../src/lib/server/search/outbox';
import { startSearchSync } from '../../src/lib/server/search/sync';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());

let standin: Standin;
const KEY = 'entries-sync-key';
let admin: MemberContext;

const engineFor = (index: string) => createSearchEngine({ url: standin.url, key: KEY, index, timeout: 5000 });
const loaders = { loadDocuments: (ids: string[]) => loadEntryDocuments(db, ids), allDocuments: () => allEntryDocuments(db, 3) };

async function indexed(engine: SearchEngine): Promise<EntryDocument[]> {
	const page = await engine.client.index<EntryDocument>(engine.index).getDocuments({ limit: 1000 });
	return [...page.results].sort((a, b) => (a.id < b.id ? -1 : 1));
}

beforeEach(async () => {
	await truncateAll(db);
	standin = await startStandin({ masterKey: KEY });
	const user = await ensureUser(db, { email: 'lead@sync.example.com', name: 'Lead' });
	const org = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Sync Depot', slug: 'sync-depot', creatorId: user.id })))!;
	admin = { userId: user.id, orgId: org.id, orgSlug: 'sync-depot', orgName: 'Sync Depot', role: 'admin', via: 'session' };
});
afterEach(async () => {
	await standin.close().catch(() => undefined);
});

const create = (title: string) => createEntry(db, admin, entryCreate.parse({ title, componentKind: 'capacitor', symptom: `${title} symptom` }));

describe('an app that dies between commit and drain', () => {
	it('loses nothing: the next process drains what committed, and the documents arrive', async () => {
		const engine = engineFor(`sync_${randomBytes(4).toString('hex')}`);
		const first = await create('Indexed before the crash');
		const sync = startSearchSync(db, engine, { ...loaders, intervalMs: 3_600_000, onError: () => {} });
		await sync.runOnce();
		await sync.stop();
		expect((await indexed(engine)).map((d) => d.title)).toEqual(['Indexed before the crash']);

		// Committed; the process is killed before its worker ticks (no drain runs here).
		const edited = await updateEntry(db, admin, first.id, { version: first.version, title: 'Edited just before the crash' });
		expect(edited.kind).toBe('saved');
		const second = await create('Written just before the crash');
		expect((await indexLag(db)).pending).toBe(2);
		expect((await indexed(engine)).map((d) => d.title)).toEqual(['Indexed before the crash']);

		// A new process starts. The index exists with its settings, so nothing is rebuilt: the outbox alone brings the changes.
		const restarted = startSearchSync(db, engine, { ...loaders, intervalMs: 3_600_000, onError: () => {} });
		try {
			const tick = await restarted.runOnce();
			expect(tick.rebuilt).toBe(false);
			expect(tick.drained).toMatchObject({ applied: 2, failed: 0 });
		} finally {
			await restarted.stop();
		}
		const docs = await indexed(engine);
		expect(docs.map((d) => d.id).sort()).toEqual([first.id, second.id].sort());
		expect(docs.find((d) => d.id === first.id)?.title).toBe('Edited just before the crash');
		expect(await indexLag(db)).toMatchObject({ pending: 0, oldestPendingAt: null });
	});
});

describe('reindex', () => {
	it('from Postgres equals the state incremental drains reached, after edits, status changes, marks and a deletion', async () => {
		const incremental = engineFor(`incremental_${randomBytes(4).toString('hex')}`);
		await ensureIndex(incremental);
		const reader = { userId: admin.userId, seesAll: true, seesOwn: true };
		const entries: Awaited<ReturnType<typeof create>>[] = [];
		for (const t of ['Leaky cap', 'Open diode', 'Shorted zener', 'Drifted resistor', 'Cracked ceramic']) entries.push(await create(t));
		await drainOutbox(db, incremental, { loadDocuments: loaders.loadDocuments, batchSize: 2 });
		await updateEntry(db, admin, entries[0].id, { version: 1, title: 'Leaky cap, edited', tags: ['leaky'] });
		await transitionEntry(db, admin, entries[1].id, 'publish', '');
		await setHelped(db, admin.orgId, entries[1].id, reader, true);
		await deleteEntry(db, admin, entries[2].id);
		expect(await recordEntryView(db, admin.orgId, entries[3].id)).toBe(true);
		// Another organisation's id, or a deleted entry, counts nothing.
		expect(await recordEntryView(db, '00000000-0000-4000-8000-000000000000', entries[3].id)).toBe(false);
		expect(await recordEntryView(db, admin.orgId, entries[2].id)).toBe(false);
		await drainOutbox(db, incremental, { loadDocuments: loaders.loadDocuments, batchSize: 2 });

		const rebuilt = engineFor(`rebuilt_${randomBytes(4).toString('hex')}`);
		const result = await reindex(rebuilt, allEntryDocuments(db, 2));
		expect(result).toEqual({ indexed: 4, removed: 0 });
		const a = await indexed(incremental);
		expect(a).toHaveLength(4);
		expect(await indexed(rebuilt)).toEqual(a);
		expect(a.find((d) => d.id === entries[1].id)).toMatchObject({ status: 'published', helpedCount: 1 });
		expect(a.find((d) => d.id === entries[0].id)).toMatchObject({ title: 'Leaky cap, edited', tags: ['leaky'] });
		expect(a.find((d) => d.id === entries[3].id)).toMatchObject({ views: 1 });
	});
});
