/**
 * Search through the real app over HTTP (vite dev, the hooks, the guard, the sync worker started
 * at server init, the official client talking to the local stand-in): tenancy, roles, safe
 * highlights, facets, the page without script, and "this helped". Entries are written through the
 * entries service, so they reach the index the way production writes do: outbox, then drain.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startStandin, type Standin } from '../../search/standin/server';
import { entryCreate } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import type { Role } from '../../src/lib/server/auth/permissions';
import { createEntry, transitionEntry } from '../../src/lib/server/entries/service';
import { createOrganisation } from '../../src/lib/server/orgs/members';
import { insertMembership } from '../../src/lib/server/orgs/queries';
import { createSearchEngine, getDocument } from '../../src/lib/server/search/engine';
import { indexLag } from '../../src/lib/server/search/outbox';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';
import { type AppServer, call, type Caller, sessionFor, startAppServer } from './support/app-server';

const db = openTestDb();
const KEY = 'search-api-test-key';
let standin: Standin;
let app: AppServer;

const A = 'depot-alpha';
const B = 'depot-bravo';
const people = {} as Record<'viewer' | 'contributor' | 'author' | 'outsider', Caller & { userId: string }>;
const ids = {} as Record<'published' | 'authorDraft' | 'contributorDraft' | 'html' | 'foreign', string>;

function asMember(userId: string, orgId: string, slug: string, role: Role): MemberContext {
	return { userId, orgId, orgSlug: slug, orgName: slug, role, via: 'session' };
}

async function write(member: MemberContext, fields: Record<string, unknown>, publish: boolean): Promise<string> {
	const entry = await createEntry(db, member, entryCreate.parse(fields));
	if (publish) await transitionEntry(db, member, entry.id, 'publish', '');
	return entry.id;
}

/** Waits until the app's worker has applied every queued change. */
async function drained(): Promise<void> {
	const deadline = Date.now() + 30_000;
	while (Date.now() < deadline) {
		if ((await indexLag(db)).pending === 0) return;
		await new Promise((r) => setTimeout(r, 200));
	}
	throw new Error('The app did not drain the search outbox within 30 s.');
}

interface Hit {
	id: string;
	title: string;
	titleHtml: string;
	status: string;
	helpedCount: number;
}
interface Result {
	total: number;
	hits: Hit[];
	facets: Record<string, { value: string; count: number; selected: boolean }[]>;
	timing: { engineMs: number; totalMs: number };
}

async function search(who: Caller, slug: string, query: string): Promise<{ status: number; body: Result & { error?: { code: string; message: string } } }> {
	const res = await call(app, who, 'GET', `/api/v1/orgs/${slug}/search?${query}`);
	return { status: res.status, body: res.json() as never };
}

beforeAll(async () => {
	await truncateAll(db);
	standin = await startStandin({ masterKey: KEY });
	for (const who of ['viewer', 'contributor', 'author', 'outsider'] as const) people[who] = await sessionFor(db, `${who}@search.example.com`);
	const orgA = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Depot Alpha', slug: A, creatorId: people.author.userId })))!.id;
	const orgB = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Depot Bravo', slug: B, creatorId: people.outsider.userId })))!.id;
	await insertMembership(db, { orgId: orgA, userId: people.viewer.userId, role: 'viewer' });
	await insertMembership(db, { orgId: orgA, userId: people.contributor.userId, role: 'contributor' });
	// The creator is the admin; the author writes as an author.
	const author = asMember(people.author.userId, orgA, A, 'author');
	const contributor = asMember(people.contributor.userId, orgA, A, 'contributor');
	ids.published = await write(
		author,
		{
			title: 'Leaky bootstrap capacitor on the gate driver',
			componentKind: 'electrolytic',
			symptom: 'Ellipse tilted toward a resistor',
			cause: 'Electrolyte leakage near the quillwort heatsink.',
			assembly: 'GD-7',
			tags: ['gate-driver']
		},
		true
	);
	ids.authorDraft = await write(author, { title: 'Marrowfield choke hums (draft)', componentKind: 'inductor', symptom: 'Ellipse narrower than the reference' }, false);
	ids.contributorDraft = await write(contributor, { title: 'Snubber capacitor open (my draft)', componentKind: 'capacitor', symptom: 'Flat line on the snubber' }, false);
	ids.html = await write(author, { title: '<img src=x onerror=alert(1)> leaky snubber resistor', componentKind: 'resistor', symptom: 'Slope <b>too</b> flat & odd' }, true);
	ids.foreign = await write(asMember(people.outsider.userId, orgB, B, 'admin'), { title: 'Quillback relay chatter', componentKind: 'inductor', symptom: 'Leaky capacitor beside the quillback relay' }, true);

	app = await startAppServer({
		DATABASE_URL: testDatabaseUrl(),
		AUTH_SECRET: 'search-api-test-secret-that-is-long-enough-0123',
		MEILISEARCH_URL: standin.url,
		MEILISEARCH_KEY: KEY
	});
	await drained();
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await standin?.close();
	await db.destroy();
});

describe('tenancy', () => {
	it("never shows a member of organisation B organisation A's text, even when B guesses A's words", async () => {
		for (const q of ['quillwort', 'bootstrap capacitor gate driver', 'marrowfield', 'snubber', 'leaky']) {
			const { status, body } = await search(people.outsider, B, `q=${encodeURIComponent(q)}`);
			expect(status).toBe(200);
			expect(body.hits.map((h) => h.id)).not.toContain(ids.published);
			expect(body.hits.every((h) => h.id === ids.foreign)).toBe(true);
			// Nothing of A's in the hits or the facet values (the query itself is echoed back, so left out).
			expect(JSON.stringify([body.hits, body.facets, body.total])).not.toMatch(/quillwort|Marrowfield|bootstrap|GD-7|gate-driver|electrolytic/i);
		}
		// Without any query, B's whole index holds only B's entry.
		const all = await search(people.outsider, B, '');
		expect(all.body.hits.map((h) => h.id)).toEqual([ids.foreign]);
	});

	it("answers 404 when B's member asks A's search, exactly as for an organisation that does not exist", async () => {
		const foreign = await call(app, people.outsider, 'GET', `/api/v1/orgs/${A}/search?q=leaky`);
		const missing = await call(app, people.outsider, 'GET', `/api/v1/orgs/no-such-depot/search?q=leaky`);
		expect([foreign.status, missing.status]).toEqual([404, 404]);
		expect(foreign.json()).toEqual(missing.json());
	});

	it("keeps A's readers away from B's entry that uses the same words", async () => {
		const { body } = await search(people.author, A, 'q=leaky+capacitor+quillback');
		expect(body.hits.map((h) => h.id)).not.toContain(ids.foreign);
	});
});

describe('roles', () => {
	it('never shows a viewer a draft, whatever they type', async () => {
		for (const q of ['marrowfield choke', 'snubber capacitor open', 'draft']) {
			const { body } = await search(people.viewer, A, `q=${encodeURIComponent(q)}`);
			expect(body.hits.every((h) => h.status === 'published')).toBe(true);
			expect(body.hits.map((h) => h.id)).not.toContain(ids.authorDraft);
			expect(body.hits.map((h) => h.id)).not.toContain(ids.contributorDraft);
		}
		expect((await search(people.viewer, A, '')).body.total).toBe(2);
	});

	it('refuses a status filter from a viewer with a clear message, and offers them no status facet', async () => {
		const { status, body } = await search(people.viewer, A, 'q=leaky&status=draft');
		expect(status).toBe(400);
		expect(body.error).toMatchObject({ code: 'invalid_input', message: expect.stringMatching(/status is for authors/) });
		expect(Object.keys((await search(people.viewer, A, 'q=leaky')).body.facets)).toEqual(['kind', 'class', 'tags', 'assembly']);
	});

	it('shows a contributor their own draft but not the author’s', async () => {
		const own = await search(people.contributor, A, 'q=snubber+capacitor+open');
		expect(own.body.hits.map((h) => h.id)).toContain(ids.contributorDraft);
		const other = await search(people.contributor, A, 'q=marrowfield+choke');
		expect(other.body.hits.map((h) => h.id)).not.toContain(ids.authorDraft);
	});

	it('lets an author find drafts and filter and count by status', async () => {
		const { body } = await search(people.author, A, 'status=draft');
		expect(body.hits.map((h) => h.id).sort()).toEqual([ids.authorDraft, ids.contributorDraft].sort());
		// Disjunctive: the chosen status still shows the count of the other one.
		expect(body.facets.status).toEqual(
			expect.arrayContaining([
				{ value: 'draft', count: 2, selected: true },
				{ value: 'published', count: 2, selected: false }
			])
		);
	});
});

describe('results', () => {
	it('escapes the entry’s own markup and marks the matches', async () => {
		const { body } = await search(people.viewer, A, 'q=leaky+snubber');
		const hit = body.hits.find((h) => h.id === ids.html)!;
		expect(hit.title).toBe('<img src=x onerror=alert(1)> leaky snubber resistor');
		expect(hit.titleHtml).toBe('&#60;img src=x onerror=alert(1)&#62; <mark>leaky</mark> <mark>snubber</mark> resistor');
		expect(JSON.stringify(body.hits.map((h) => h.titleHtml))).not.toMatch(/<img|<b>/);
	});

	it('finds the gate-driver capacitor from a typo, counts facets and reports the time taken', async () => {
		const { status, body } = await search(people.viewer, A, 'q=leaky+capasitor+gate+driver&limit=3');
		expect(status).toBe(200);
		expect(body.hits[0].id).toBe(ids.published);
		expect(body.facets.kind).toEqual(expect.arrayContaining([{ value: 'electrolytic', count: 1, selected: false }]));
		expect(body.timing.totalMs).toBeGreaterThanOrEqual(body.timing.engineMs);
	});

	it('answers bad input with 400 and the field at fault', async () => {
		for (const [query, path] of [
			['kind=flux-capacitor', 'kind'],
			['sort=loudest', 'sort'],
			['limit=500', 'limit'],
			[`q=${'x'.repeat(201)}`, 'q']
		]) {
			const res = await call(app, people.viewer, 'GET', `/api/v1/orgs/${A}/search?${query}`);
			expect(res.status, query).toBe(400);
			expect((res.json() as { error: { issues: { path: string }[] } }).error.issues[0].path.split('.')[0]).toBe(path);
		}
	});
});

describe('the search page without script', () => {
	it('renders the results of a GET form on the server, with no drafts for a viewer', async () => {
		const page = await call(app, people.viewer, 'GET', `/o/${A}/search?q=leaky+capasitor`);
		expect(page.status).toBe(200);
		expect(page.text).toContain(`href="/o/${A}/entries/${ids.published}"`);
		expect(page.text).toContain('<mark>Leaky</mark> bootstrap');
		expect(page.text).not.toContain('Marrowfield');
	});

	it('suggests matching the capture when no text matches', async () => {
		const page = await call(app, people.viewer, 'GET', `/o/${A}/search?q=quokka+marzipan`);
		expect(page.text).toContain('No text match — match the capture instead');
		expect(page.text).toContain(`href="/o/${A}/match"`);
	});

	it('shows examples instead of results before anything is typed', async () => {
		const page = await call(app, people.viewer, 'GET', `/o/${A}/search`);
		expect(page.text).toContain('data-testid="search-empty"');
		expect(page.text).not.toContain('data-testid="search-hit"');
	});
});

describe('this helped', () => {
	const path = (slug: string, id: string) => `/api/v1/orgs/${slug}/entries/${id}/helped`;

	it('counts one mark per person, takes it back, and carries the count into the search document', async () => {
		const engine = createSearchEngine({ url: standin.url, key: KEY });
		expect((await call(app, people.viewer, 'POST', path(A, ids.published), { json: {} })).json()).toEqual({ helped: true, helpedCount: 1 });
		expect((await call(app, people.viewer, 'POST', path(A, ids.published), { json: {} })).json()).toEqual({ helped: true, helpedCount: 1 });
		expect((await call(app, people.author, 'POST', path(A, ids.published), { json: {} })).json()).toEqual({ helped: true, helpedCount: 2 });
		expect((await call(app, people.viewer, 'DELETE', path(A, ids.published))).json()).toEqual({ helped: false, helpedCount: 1 });
		await drained();
		expect(await getDocument(engine, ids.published)).toMatchObject({ helpedCount: 1, popularity: expect.any(Number) });
		expect((await getDocument(engine, ids.published))!.popularity).toBeGreaterThan(0);
	});

	it('works as a plain form: back to the page it came from, never to another site', async () => {
		const back = `/o/${A}/search?q=leaky`;
		const res = await call(app, people.contributor, 'POST', path(A, ids.published), { helped: '1', redirectTo: back });
		expect([res.status, res.location]).toEqual([303, back]);
		const away = await call(app, people.contributor, 'POST', path(A, ids.published), { helped: '0', redirectTo: 'https://elsewhere.example/' });
		expect([away.status, away.location]).toEqual([303, `/o/${A}/entries/${ids.published}`]);
	});

	it("is 404 for a draft the caller cannot see and for another organisation's entry", async () => {
		expect((await call(app, people.viewer, 'POST', path(A, ids.authorDraft), { json: {} })).status).toBe(404);
		expect((await call(app, people.outsider, 'POST', path(A, ids.published), { json: {} })).status).toBe(404);
		expect((await call(app, people.outsider, 'POST', path(B, ids.published), { json: {} })).status).toBe(404);
		const row = await db.selectFrom('entry').select('helpedCount').where('id', '=', ids.authorDraft).executeTakeFirstOrThrow();
		expect(row.helpedCount).toBe(0);
	});
});

describe('the index status line', () => {
	it('tells an admin the index is up to date, and shows viewers nothing of it', async () => {
		await drained();
		// The author of these tests created organisation A, so they are its admin.
		const home = await call(app, people.author, 'GET', `/o/${A}`);
		expect(home.text).toContain('Search index: up to date');
		expect((await call(app, people.viewer, 'GET', `/o/${A}`)).text).not.toContain('Search index');
	});
});
