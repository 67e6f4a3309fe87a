/**
 * The search contract: the same assertions run against the local stand-in (started in this
 * process) and, when MEILISEARCH_URL is set, against that engine too. Expected behaviour comes
 * from the engine's REST API reference (error codes, task life cycle, filter grammar, facet and
 * highlight shapes) as the `meilisearch` 0.62 client uses it; relevance expectations (typos,
 * prefixes, synonyms) are facts of the trade, common practice, no source.
 */
import { randomBytes } from 'node:crypto';
import { MeilisearchApiError, type Index } from 'meilisearch';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { ENTRIES_SETTINGS, STOP_WORDS, type EntryDocument } from '../../search/settings';
import { startStandin, type Standin } from '../../search/standin/server';
import {
	createSearchEngine,
	deleteAllDocuments,
	deleteByFilter,
	deleteDocuments,
	ensureIndex,
	getDocument,
	indexDocuments,
	searchEntries,
	SearchEngineError,
	updateDocuments,
	type SearchEngine
} from '../../src/lib/server/search/engine';
import { FIXTURES, ORG_A, ORG_B, OTHER_USER, WRITER, entryDoc } from './search-fixtures';

interface Target {
	name: string;
	standin: boolean;
	start(): Promise<{ url: string; key?: string; stop(): Promise<void> }>;
}

const targets: Target[] = [
	{
		name: 'local stand-in',
		standin: true,
		async start() {
			const key = randomBytes(12).toString('hex');
			const s: Standin = await startStandin({ masterKey: key });
			return { url: s.url, key, stop: () => s.close() };
		}
	}
];
if (process.env.MEILISEARCH_URL) {
	targets.push({
		name: `engine at MEILISEARCH_URL`,
		standin: false,
		async start() {
			return { url: process.env.MEILISEARCH_URL!, key: process.env.MEILISEARCH_KEY || undefined, stop: async () => {} };
		}
	});
}

const VIEWER = { userId: OTHER_USER, seesAll: false, seesOwn: false };
const ADMIN = { userId: OTHER_USER, seesAll: true, seesOwn: true };
const contributor = (userId: string) => ({ userId, seesAll: false, seesOwn: true });

const ids = (hits: { id: string }[] | EntryDocument[]) => hits.map((h) => h.id).sort();

describe.each(targets)('search contract: $name', (target) => {
	let engine: SearchEngine;
	let index: Index<EntryDocument>;
	let conn: Awaited<ReturnType<Target['start']>>;
	// A fresh index per run, so a shared engine's other indexes are never touched.
	const uid = `contract_${randomBytes(6).toString('hex')}`;

	beforeAll(async () => {
		conn = await target.start();
		engine = createSearchEngine({ url: conn.url, key: conn.key, index: uid });
		index = engine.client.index<EntryDocument>(uid);
		await ensureIndex(engine);
	});
	afterAll(async () => {
		await engine.client.deleteIndex(uid).waitTask().catch(() => undefined);
		await conn.stop();
	});
	beforeEach(async () => {
		await deleteAllDocuments(engine);
		await indexDocuments(engine, FIXTURES);
	});

	const search = (q: string, params: Record<string, unknown> = {}) => index.search(q, { limit: 50, ...params });

	describe('indexes, settings and tasks', () => {
		it('answers health without a key', async () => {
			const res = await fetch(`${conn.url}/health`);
			expect(res.status).toBe(200);
			expect(await res.json()).toEqual({ status: 'available' });
		});

		it('has created the index with the primary key, and refuses to create it twice through a failed task', async () => {
			const info = await index.getRawInfo();
			expect(info).toMatchObject({ uid, primaryKey: 'id' });
			const task = await engine.client.createIndex(uid, { primaryKey: 'id' }).waitTask();
			expect(task.status).toBe('failed');
			expect(task.error?.code).toBe('index_already_exists');
		});

		it('reports a missing index as 404 index_not_found', async () => {
			const err = await engine.client.index(`${uid}_missing`).getRawInfo().catch((e: unknown) => e);
			expect(err).toBeInstanceOf(MeilisearchApiError);
			expect((err as MeilisearchApiError).response.status).toBe(404);
			expect((err as MeilisearchApiError).cause?.code).toBe('index_not_found');
		});

		it('holds the settings from search/settings.ts, and ensureIndex is idempotent', async () => {
			const s = await index.getSettings();
			expect(s.searchableAttributes).toEqual(ENTRIES_SETTINGS.searchableAttributes);
			expect(s.rankingRules).toEqual(ENTRIES_SETTINGS.rankingRules);
			expect([...(s.filterableAttributes ?? [])].sort()).toEqual([...ENTRIES_SETTINGS.filterableAttributes].sort());
			expect([...(s.sortableAttributes ?? [])].sort()).toEqual([...ENTRIES_SETTINGS.sortableAttributes].sort());
			expect([...(s.stopWords ?? [])].sort()).toEqual([...STOP_WORDS].sort());
			expect(s.synonyms?.['e-cap']).toEqual(expect.arrayContaining(['electrolytic capacitor']));
			expect(s.typoTolerance?.disableOnAttributes).toEqual(['partNumber']);
			expect(await ensureIndex(engine)).toEqual({ created: false, settingsUpdated: false });
		});

		it('applies a single setting through its own route', async () => {
			const task = await index.updateSortableAttributes(['updatedAt', 'popularity']).waitTask();
			expect(task.status).toBe('succeeded');
			expect([...(await index.getSortableAttributes())].sort()).toEqual(['popularity', 'updatedAt']);
			// ensureIndex notices the drift and puts the settings back.
			expect((await ensureIndex(engine)).settingsUpdated).toBe(true);
			expect([...(await index.getSortableAttributes())].sort()).toEqual([...ENTRIES_SETTINGS.sortableAttributes].sort());
		});

		it('answers writes with an enqueued task that ends succeeded, polled through GET /tasks/:uid', async () => {
			const enqueued = await index.addDocuments([entryDoc('task-probe', { title: 'probe' })]);
			expect(enqueued.taskUid).toEqual(expect.any(Number));
			expect(['enqueued', 'processing', 'succeeded']).toContain(enqueued.status);
			const done = await engine.client.tasks.waitForTask(enqueued.taskUid);
			expect(done).toMatchObject({ uid: enqueued.taskUid, status: 'succeeded', type: 'documentAdditionOrUpdate', error: null });
			expect(done.finishedAt).toEqual(expect.any(String));
		});

		it('records a failed task with its error instead of throwing (invalid document id)', async () => {
			const task = await index.addDocuments([entryDoc('not a valid id!', { title: 'x' })]).waitTask();
			expect(task.status).toBe('failed');
			expect(task.error).toMatchObject({ code: 'invalid_document_id', type: 'invalid_request' });
			expect(task.error?.link).toEqual(expect.any(String));
			// Our module turns the failed task into an error.
			await expect(indexDocuments(engine, [entryDoc('not a valid id!', {})])).rejects.toMatchObject({ name: 'SearchEngineError', code: 'invalid_document_id' });
		});

		it.runIf(Boolean(target.standin || process.env.MEILISEARCH_KEY))('refuses a wrong key with 403 invalid_api_key', async () => {
			const wrong = createSearchEngine({ url: conn.url, key: 'not-the-key', index: uid });
			const err = await wrong.client.index(uid).search('cap').catch((e: unknown) => e);
			expect(err).toBeInstanceOf(MeilisearchApiError);
			expect((err as MeilisearchApiError).response.status).toBe(403);
			expect((err as MeilisearchApiError).cause?.code).toBe('invalid_api_key');
		});
	});

	describe('documents', () => {
		it('replaces a whole document on add, and merges on partial update', async () => {
			await indexDocuments(engine, [{ ...FIXTURES[0], title: 'Replaced title', fix: '' }]);
			expect(await getDocument(engine, 'leaky-cap')).toMatchObject({ title: 'Replaced title', fix: '' });
			await updateDocuments(engine, [{ id: 'leaky-cap', views: 41 }]);
			expect(await getDocument(engine, 'leaky-cap')).toMatchObject({ title: 'Replaced title', views: 41, assembly: 'PSU-200' });
		});

		it('deletes one, a batch, by filter and all', async () => {
			await deleteDocuments(engine, ['leaky-cap']);
			expect(await getDocument(engine, 'leaky-cap')).toBeUndefined();
			await deleteDocuments(engine, ['soft-zener', 'bulk-short', 'no-such-id']);
			expect(ids((await search('')).hits)).toEqual(['b-secret', 'open-reset']);
			await deleteByFilter(engine, ORG_B);
			expect(ids((await search('')).hits)).toEqual(['open-reset']);
			await deleteAllDocuments(engine);
			expect((await search('')).hits).toEqual([]);
		});
	});

	describe('filters', () => {
		const filtered = async (filter: string | (string | string[])[]) => ids((await search('', { filter })).hits);
		it.each([
			['=', `componentKind = capacitor`, ['b-secret', 'bulk-short', 'leaky-cap']],
			['= on an array, quoted', `tags = "gate-driver"`, ['leaky-cap']],
			['!=', `orgId != "${ORG_A}"`, ['b-secret']],
			['>', `updatedAt > 3000`, ['bulk-short', 'soft-zener']],
			['>=', `updatedAt >= 3000`, ['bulk-short', 'leaky-cap', 'soft-zener']],
			['<', `createdAt < 2000`, ['b-secret', 'leaky-cap']],
			['<=', `createdAt <= 2000`, ['b-secret', 'leaky-cap', 'soft-zener']],
			['TO', `updatedAt 2000 TO 4000`, ['b-secret', 'bulk-short', 'leaky-cap']],
			['IN', `assembly IN [CTRL-7, "QB-1"]`, ['b-secret', 'open-reset', 'soft-zener']],
			['NOT IN', `assembly NOT IN ["PSU-200", "CTRL-7"]`, ['b-secret']],
			['EXISTS / NOT', `NOT partNumber EXISTS`, []],
			['AND', `componentKind = capacitor AND status = draft`, ['bulk-short']],
			['OR', `class = open OR class = junction`, ['open-reset', 'soft-zener']],
			['NOT', `NOT componentKind = capacitor`, ['open-reset', 'soft-zener']],
			['parentheses', `orgId = "${ORG_A}" AND (class = short OR tags = logic)`, ['bulk-short', 'open-reset']],
			['case-insensitive strings', `componentKind = CAPACITOR AND tags = POWER`, ['bulk-short', 'leaky-cap']]
		])('%s', async (_op, filter, expected) => {
			expect(await filtered(filter)).toEqual(expected);
		});

		it('reads an array as AND of ORs', async () => {
			expect(await filtered([['class = open', 'class = short'], `orgId = "${ORG_A}"`, 'assembly = "CTRL-7"'])).toEqual(['open-reset']);
		});

		it.each([
			['a filter on an attribute that is not filterable', 'title = "Zener"'],
			['an unknown operator', 'status ~ draft'],
			['a dangling AND', 'status = draft AND'],
			['an unclosed parenthesis', '(status = draft']
		])('refuses %s with invalid_search_filter', async (_what, filter) => {
			const err = await search('', { filter }).catch((e: unknown) => e);
			expect(err).toBeInstanceOf(MeilisearchApiError);
			expect((err as MeilisearchApiError).response.status).toBe(400);
			expect((err as MeilisearchApiError).cause).toMatchObject({ code: 'invalid_search_filter', type: 'invalid_request' });
			expect((err as MeilisearchApiError).cause?.message).toEqual(expect.any(String));
		});
	});

	describe('search', () => {
		it('counts facet values over the matching documents', async () => {
			const r = await search('', { filter: `orgId = "${ORG_A}"`, facets: ['componentKind', 'tags', 'status'] });
			expect(r.estimatedTotalHits).toBe(4);
			expect(r.facetDistribution).toEqual({
				componentKind: { capacitor: 2, 'ic-pin': 1, zener: 1 },
				tags: { 'gate-driver': 1, logic: 1, power: 2, reference: 1 },
				status: { draft: 1, published: 3 }
			});
		});

		it('wraps matched words in the highlight tags', async () => {
			const r = await search('capacitor', { attributesToHighlight: ['title'], highlightPreTag: '<mark>', highlightPostTag: '</mark>', filter: `orgId = "${ORG_A}"` });
			const titles = r.hits.map((h) => h._formatted?.title);
			expect(titles).toContain('Leaky electrolytic <mark>capacitor</mark> on the gate driver');
			expect(titles).toContain('Dead short across the bulk <mark>capacitor</mark>');
		});

		it('sorts by a sortable attribute both ways', async () => {
			const asc = await search('', { sort: ['updatedAt:asc'], filter: `orgId = "${ORG_A}"` });
			expect(asc.hits.map((h) => h.updatedAt)).toEqual([1000, 3000, 4000, 5000]);
			const desc = await search('', { sort: ['popularity:desc'], filter: `orgId = "${ORG_A}"` });
			const pops = desc.hits.map((h) => h.popularity);
			expect(pops).toEqual([...pops].sort((a, b) => b - a));
		});

		it('refuses to sort by an attribute that is not sortable', async () => {
			const err = await search('', { sort: ['title:asc'] }).catch((e: unknown) => e);
			expect((err as MeilisearchApiError).cause?.code).toBe('invalid_search_sort');
		});

		it('pages with limit and offset and reports the total', async () => {
			const first = await search('', { sort: ['createdAt:asc'], limit: 2, offset: 0 });
			const second = await search('', { sort: ['createdAt:asc'], limit: 2, offset: 2 });
			expect(first.estimatedTotalHits).toBe(5);
			expect(first.hits).toHaveLength(2);
			expect(second.hits).toHaveLength(2);
			expect(new Set([...first.hits, ...second.hits].map((h) => h.id)).size).toBe(4);
			expect([...first.hits, ...second.hits].map((h) => h.createdAt)).toEqual([1000, 1000, 2000, 3000]);
		});

		it('returns only the attributes asked for', async () => {
			const r = await search('zener', { attributesToRetrieve: ['id', 'title'] });
			expect(r.hits[0]).toEqual({ id: 'soft-zener', title: 'Zener knee too soft at breakdown' });
		});

		it('matches "capasitor" (one typo) to every entry that says capacitor', async () => {
			const r = await search('capasitor', { filter: `orgId = "${ORG_A}"` });
			expect(ids(r.hits)).toEqual(['bulk-short', 'leaky-cap']);
		});

		// Relevance table: query → the entry that must rank in the top three.
		it.each([
			['a typo: "leaky capasitor"', 'leaky capasitor', 'leaky-cap'],
			['two typos: "electrolitik"', 'electrolitik', 'leaky-cap'],
			['a prefix: "capac"', 'electrolytic capac', 'leaky-cap'],
			['a synonym: "e-cap" for "electrolytic capacitor"', 'e-cap gate', 'leaky-cap'],
			['a synonym: "z-diode" for "zener"', 'z-diode', 'soft-zener'],
			['a synonym: "shorted" for "dead short"', 'shorted', 'bulk-short'],
			['a synonym: "open circuit" for "no continuity"', 'open circuit reset', 'open-reset'],
			['a synonym: "leakage" for "leaky"', 'leakage on the gate driver', 'leaky-cap'],
			['stop words ignored', 'the knee of the zener', 'soft-zener'],
			['a junior’s words: "leaky cap on the gate driver"', 'leaky cap on the gate driver', 'leaky-cap'],
			['a junior’s words: "knee too soft"', 'knee too soft', 'soft-zener'],
			['a part number', '1N4733', 'soft-zener']
		])('finds %s', async (_what, q, expected) => {
			const r = await search(q, { filter: `orgId = "${ORG_A}"` });
			expect(r.hits.slice(0, 3).map((h) => h.id)).toContain(expected);
		});
	});

	describe('searchEntries (tenancy and roles)', () => {
		it('never shows organisation B another organisation’s text, even when guessing its words', async () => {
			for (const q of ['leaky electrolytic capacitor gate driver', 'zener knee', 'dead short bulk', 'open trace reset', '']) {
				const r = await searchEntries(engine, { orgId: ORG_B, reader: ADMIN, q, facets: ['tags', 'assembly', 'componentKind'] });
				expect(r.hits.every((h) => h.document.orgId === ORG_B)).toBe(true);
				expect(Object.keys(r.facets.tags ?? {})).not.toContain('gate-driver');
				expect(Object.keys(r.facets.assembly ?? {})).not.toContain('PSU-200');
			}
			const a = await searchEntries(engine, { orgId: ORG_A, reader: ADMIN, q: 'marrowfield quillback' });
			expect(a.hits).toEqual([]);
			expect(a.total).toBe(0);
		});

		it('cannot be widened by a filter value that tries to break out of its quotes', async () => {
			const r = await searchEntries(engine, {
				orgId: ORG_B,
				reader: ADMIN,
				filters: { tags: [`x" OR orgId = "${ORG_A}`, 'x\\" OR orgId = \\"' + ORG_A] }
			});
			expect(r.hits).toEqual([]);
		});

		it('shows viewers published entries only, contributors their own drafts too, authors everything', async () => {
			const viewer = await searchEntries(engine, { orgId: ORG_A, reader: VIEWER, q: 'capacitor' });
			expect(viewer.hits.map((h) => h.document.id)).not.toContain('bulk-short');
			expect(viewer.hits.every((h) => h.document.status === 'published')).toBe(true);
			const asked = await searchEntries(engine, { orgId: ORG_A, reader: VIEWER, filters: { status: ['draft'] } });
			expect(asked.hits).toEqual([]);
			const writer = await searchEntries(engine, { orgId: ORG_A, reader: contributor(WRITER), q: 'capacitor' });
			expect(writer.hits.map((h) => h.document.id)).toContain('bulk-short');
			const fellow = await searchEntries(engine, { orgId: ORG_A, reader: contributor(OTHER_USER), q: 'dead short bulk capacitor' });
			expect(fellow.hits.map((h) => h.document.id)).not.toContain('bulk-short');
			expect(fellow.hits.length).toBeGreaterThan(0);
			const author = await searchEntries(engine, { orgId: ORG_A, reader: ADMIN, filters: { status: ['draft'] } });
			expect(author.hits.map((h) => h.document.id)).toEqual(['bulk-short']);
		});

		it('narrows by facets, sorts by date and counts facets', async () => {
			const r = await searchEntries(engine, {
				orgId: ORG_A,
				reader: ADMIN,
				filters: { assembly: ['PSU-200', 'CTRL-7'], componentKind: ['capacitor', 'zener'] },
				facets: ['status', 'componentKind'],
				sort: 'updated'
			});
			expect(r.hits.map((h) => h.document.id)).toEqual(['soft-zener', 'bulk-short', 'leaky-cap']);
			expect(r.facets.componentKind).toEqual({ capacitor: 2, zener: 1 });
			expect(r.total).toBe(3);
		});

		it('returns HTML-safe highlights: entry text is escaped, matches are marked', async () => {
			await indexDocuments(engine, [entryDoc('html-title', { title: '<img src=x onerror=alert(1)> capacitor & co' })]);
			const r = await searchEntries(engine, { orgId: ORG_A, reader: VIEWER, q: 'capacitor' });
			const hit = r.hits.find((h) => h.document.id === 'html-title');
			expect(hit?.highlights.title).toBe('&#60;img src=x onerror=alert(1)&#62; <mark>capacitor</mark> &#38; co');
		});

		it('gives a clear error for an engine that is not there', async () => {
			const gone = createSearchEngine({ url: 'http://127.0.0.1:1', index: uid, timeout: 2000 });
			await expect(searchEntries(gone, { orgId: ORG_A, reader: VIEWER, q: 'cap' })).rejects.toMatchObject({
				name: 'SearchUnavailableError',
				message: expect.stringContaining('not reachable')
			});
		});

		it('gives a clear error when the engine refuses the request', async () => {
			const err = await searchEntries(createSearchEngine({ url: conn.url, key: conn.key, index: `${uid}_none` }), { orgId: ORG_A, reader: VIEWER }).catch((e: unknown) => e);
			expect(err).toBeInstanceOf(SearchEngineError);
			expect((err as SearchEngineError).code).toBe('index_not_found');
		});
	});
});

describe('local stand-in specifics', () => {
	let s: Standin;
	let engine: SearchEngine;
	beforeAll(async () => {
		s = await startStandin({});
		engine = createSearchEngine({ url: s.url, index: 'specifics' });
		await ensureIndex(engine);
		await indexDocuments(engine, FIXTURES);
	});
	afterAll(() => s.close());

	it.each([
		['CONTAINS', 'title CONTAINS cap'],
		['STARTS WITH', 'componentKind STARTS WITH cap'],
		['IS NULL', 'publishedAt IS NULL'],
		['geo filters', '_geoRadius(45.47, 9.18, 2000)']
	])('refuses %s rather than ignoring it', async (_what, filter) => {
		const err = await engine.client.index('specifics').search('', { filter }).catch((e: unknown) => e);
		expect((err as MeilisearchApiError).cause?.code).toBe('invalid_search_filter');
		expect((err as MeilisearchApiError).cause?.message).toMatch(/not supported/);
	});

	it('refuses search parameters it does not implement', async () => {
		const err = await engine.client.index('specifics').search('cap', { attributesToCrop: ['body'] }).catch((e: unknown) => e);
		expect((err as MeilisearchApiError).response.status).toBe(400);
		expect((err as MeilisearchApiError).cause?.code).toBe('feature_not_supported');
	});

	it('does not apply typos to part numbers (typo tolerance is off on that attribute)', async () => {
		const exact = await engine.client.index('specifics').search('1N4733');
		expect(exact.hits.map((h) => h.id)).toEqual(['soft-zener']);
		const typo = await engine.client.index('specifics').search('1N4738');
		expect(typo.hits).toEqual([]);
	});

	// The engine marks only the typed part of a word found by prefix (from memory of its responses).
	it('marks only the typed prefix of a word found by prefix, and whole words otherwise', async () => {
		const r = await engine.client.index('specifics').search('leaky capac', { attributesToHighlight: ['title'], filter: 'orgId = "' + ORG_A + '"' });
		expect(r.hits[0]._formatted?.title).toBe('<em>Leaky</em> electrolytic <em>capac</em>itor on the gate driver');
		const synonym = await engine.client.index('specifics').search('cap ', { attributesToHighlight: ['title'], filter: 'orgId = "' + ORG_A + '"' });
		expect(synonym.hits.map((h) => h._formatted?.title)).toContain('Leaky electrolytic <em>capacitor</em> on the gate driver');
	});

	it('answers unknown routes with a proper error body', async () => {
		const res = await fetch(`${s.url}/keys`);
		expect(res.status).toBe(404);
		expect(await res.json()).toMatchObject({ code: 'not_found', type: 'invalid_request', link: expect.any(String) });
	});

	it('asks for the key when started with one', async () => {
		const locked = await startStandin({ masterKey: 'k' });
		try {
			const res = await fetch(`${locked.url}/indexes`);
			expect(res.status).toBe(401);
			expect(await res.json()).toMatchObject({ code: 'missing_authorization_header', type: 'auth' });
		} finally {
			await locked.close();
		}
	});
});
