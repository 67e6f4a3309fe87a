import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { type AppServer, call, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * The entry pages as a browser without script uses them: the table (same URL as the API's
 * filters), the entry page with its status forms, delete and undo, and the history with restore.
 */
const db = openTestDb();
let app: AppServer;
const who: Record<'admin' | 'author' | 'contributor' | 'viewer', { cookie: string; userId: string }> = {} as never;
const SLUG = 'pages-bench';
const api = `/api/v1/orgs/${SLUG}`;
const pages = `/o/${SLUG}`;

async function createEntry(as: keyof typeof who, json: Record<string, unknown>): Promise<{ id: string; version: number }> {
	const res = await call(app, who[as], 'POST', `${api}/entries`, { json: { componentKind: 'other', symptom: 'Bench symptom', ...json } });
	expect(res.status).toBe(201);
	return (res.json() as { entry: { id: string; version: number } }).entry;
}

async function publish(id: string) {
	expect((await call(app, who.author, 'POST', `${api}/entries/${id}/transitions`, { json: { action: 'publish' } })).status).toBe(200);
}

beforeAll(async () => {
	await truncateAll(db);
	app = await startAppServer({ DATABASE_URL: testDatabaseUrl(), AUTH_SECRET: 'entry-pages-test-secret-long-enough-0123456789' });
	const org = (await insertOrg(db, { name: 'Pages bench', slug: SLUG }))!;
	for (const role of ['admin', 'author', 'contributor', 'viewer'] as const) {
		who[role] = await sessionFor(db, `${role}@pages.example`, `${role} of the bench`);
		await insertMembership(db, { orgId: org.id, userId: who[role].userId, role });
	}
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await db.destroy();
});

describe('the entry table', () => {
	it('shows viewers only published entries, and filters through the URL exactly as the API does', async () => {
		const diode = await createEntry('author', { title: 'Clamp diode D4 leaky', componentKind: 'diode', tags: ['clamp'] });
		const resistor = await createEntry('author', { title: 'Pull-up R17 open', componentKind: 'resistor' });
		await publish(diode.id);
		await publish(resistor.id);
		await createEntry('contributor', { title: 'Unreviewed draft about C9', componentKind: 'capacitor' });

		const all = await call(app, who.viewer, 'GET', `${pages}/entries`);
		expect(all.status).toBe(200);
		expect(all.text).toContain('Clamp diode D4 leaky');
		expect(all.text).toContain('Pull-up R17 open');
		expect(all.text).not.toContain('Unreviewed draft about C9');
		// A viewer has no status filter: there is nothing but published entries to choose from.
		expect(all.text).not.toContain('name="status"');

		// The contributor sees their own draft beside the published ones.
		expect((await call(app, who.contributor, 'GET', `${pages}/entries`)).text).toContain('Unreviewed draft about C9');

		const filtered = await call(app, who.viewer, 'GET', `${pages}/entries?kind=diode&tag=clamp`);
		expect(filtered.text).toContain('Clamp diode D4 leaky');
		expect(filtered.text).not.toContain('Pull-up R17 open');
		const fromApi = (await call(app, who.viewer, 'GET', `${api}/entries?kind=diode&tag=clamp`)).json() as { entries: { title: string }[] };
		expect(fromApi.entries.map((e) => e.title)).toEqual(['Clamp diode D4 leaky']);

		const none = await call(app, who.viewer, 'GET', `${pages}/entries?kind=inductor`);
		expect(none.text).toContain('No entries match these filters.');
		// A bad filter in a shared link is reported, not a crash.
		const bad = await call(app, who.viewer, 'GET', `${pages}/entries?kind=teapot`);
		expect(bad.status).toBe(200);
		expect(bad.text).toContain('were not valid');
	}, 60_000);
});

describe('the entry page', () => {
	it('hides drafts from viewers and renders Markdown sanitised', async () => {
		const e = await createEntry('contributor', {
			title: 'Sanitised body check',
			body: 'Look at **pin 7**.\n\n<script>window.bad = 1</script><img src=x onerror="window.bad = 2">'
		});
		expect((await call(app, who.viewer, 'GET', `${pages}/entries/${e.id}`)).status).toBe(404);
		const own = await call(app, who.contributor, 'GET', `${pages}/entries/${e.id}`);
		expect(own.status).toBe(200);
		const body = own.text.split('data-testid="entry-body">')[1]?.split('</div>')[0] ?? '';
		expect(body).toContain('<strong>pin 7</strong>');
		// Raw HTML in the Markdown comes out as text: no element, no handler attribute.
		expect(body).not.toMatch(/<script|<img[^>]*onerror/i);
		expect(body).toContain('&lt;script&gt;');
		// The page's data carries the Markdown source, escaped so it can never close a script tag.
		expect(own.text).not.toContain('<script>window.bad');
	}, 30_000);

	it('walks a submission through review with the status forms, and shows the reviewer’s comment', async () => {
		const e = await createEntry('contributor', { title: 'Review walk' });
		const page = `${pages}/entries/${e.id}`;
		expect((await call(app, who.contributor, 'POST', `${page}?/transition`, { action: 'submit' })).status).toBe(200);
		// Sending back needs a reason.
		const noReason = await call(app, who.author, 'POST', `${page}?/transition`, { action: 'return', comment: ' ' });
		expect(noReason.status).toBe(400);
		expect(noReason.text).toContain('Say why you are sending it back');
		expect((await call(app, who.author, 'POST', `${page}?/transition`, { action: 'return', comment: 'Add the test conditions.' })).status).toBe(200);
		const back = await call(app, who.contributor, 'GET', page);
		expect(back.text).toContain('Sent back by the reviewer');
		expect(back.text).toContain('Add the test conditions.');
		// A contributor may not publish, even their own entry.
		expect((await call(app, who.contributor, 'POST', `${page}?/transition`, { action: 'publish' })).status).toBe(403);
	}, 30_000);

	it('deletes for admins, and the table offers to undo it', async () => {
		const e = await createEntry('author', { title: 'Delete and undo' });
		const del = await call(app, who.admin, 'POST', `${pages}/entries/${e.id}?/delete`, {});
		expect(del.status).toBe(303);
		expect(del.location).toBe(`${pages}/entries?deleted=${e.id}`);
		expect((await call(app, who.admin, 'GET', `${pages}/entries/${e.id}`)).status).toBe(404);
		expect((await call(app, who.admin, 'GET', del.location!)).text).toContain('Undo delete');
		const undo = await call(app, who.admin, 'POST', `${pages}/entries?/restore`, { id: e.id });
		expect(undo.status).toBe(303);
		expect((await call(app, who.admin, 'GET', `${pages}/entries/${e.id}`)).status).toBe(200);
	}, 30_000);
});

describe('the history', () => {
	it('shows what changed between versions and restores an old one as a new version', async () => {
		const e = await createEntry('author', { title: 'History walk', body: 'First line\nSecond line\n' });
		const saved = await call(app, who.author, 'PATCH', `${api}/entries/${e.id}`, { json: { version: 1, body: 'First line\nSecond line, corrected\n' } });
		expect(saved.status).toBe(200);

		const history = await call(app, who.author, 'GET', `${pages}/entries/${e.id}/history`);
		expect(history.status).toBe(200);
		expect(history.text).toContain('Changes from version 1 to 2');
		expect(history.text).toMatch(/<ins[^>]*>Second line, corrected/);
		expect(history.text).toMatch(/<del[^>]*>Second line\n/);

		// Restoring from a stale page is refused: someone saved in between.
		const stale = await call(app, who.author, 'POST', `${pages}/entries/${e.id}/history?/restore`, { restore: '1', version: '1' });
		expect(stale.status).toBe(409);
		const ok = await call(app, who.author, 'POST', `${pages}/entries/${e.id}/history?/restore`, { restore: '1', version: '2' });
		expect(ok.status).toBe(303);
		const now = (await call(app, who.author, 'GET', `${api}/entries/${e.id}`)).json() as { entry: { version: number; body: string } };
		expect(now.entry).toMatchObject({ version: 3, body: 'First line\nSecond line' });
		// Contributors read the history but cannot restore.
		expect((await call(app, who.contributor, 'POST', `${pages}/entries/${e.id}/history?/restore`, { restore: '1', version: '3' })).status).toBe(403);
	}, 30_000);
});
