import { Window } from 'happy-dom';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startMailStandin, type MailStandin, type StoredMessage } from '../../scripts/lib/mail-standin';
import { entryCreate, LIMITS } from '../../src/lib/schemas/entries';
import { createEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { type AppServer, call, type Caller, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * Writing and reviewing entries through the real app: the editor's form actions (as a browser
 * without script posts them), the JSON API its script uses, the review queue, the mail each step
 * sends (read back from a real SMTP server) and the top bar's review badge.
 */
const db = openTestDb();
let app: AppServer;
let mail: MailStandin;
const SLUG = 'writing-bench';
let orgId = '';
type Who = Caller & { userId: string; email: string };
const who = {} as Record<'admin' | 'author' | 'author2' | 'contributor' | 'contributor2' | 'viewer', Who>;
const window = new Window();

beforeAll(async () => {
	await truncateAll(db);
	mail = await startMailStandin();
	app = await startAppServer({
		DATABASE_URL: testDatabaseUrl(),
		AUTH_SECRET: 'entry-writing-test-secret-long-enough-0123456789',
		SMTP_URL: `smtp://127.0.0.1:${mail.smtpPort}`
	});
	orgId = (await insertOrg(db, { name: 'Writing Bench', slug: SLUG }))!.id;
	const roles = { admin: 'admin', author: 'author', author2: 'author', contributor: 'contributor', contributor2: 'contributor', viewer: 'viewer' } as const;
	for (const [key, role] of Object.entries(roles) as [keyof typeof who, (typeof roles)[keyof typeof roles]][]) {
		const email = `${key}@writing.example`;
		const session = await sessionFor(db, email, `Bench ${key}`);
		who[key] = { ...session, email };
		await insertMembership(db, { orgId, userId: session.userId, role });
	}
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await mail?.close();
	await db.destroy();
	await window.happyDOM.close();
});

const form = (extra: Record<string, string> = {}) => ({
	title: 'Gate driver U4 output stuck low',
	componentKind: 'ic-pin',
	partNumber: 'GD-4410',
	package: 'SOIC-8',
	assembly: 'Drive board rev C',
	testPoint: 'U4 pin 7 ↔ GND',
	symptom: 'Motor never starts; no gate pulses',
	symptomDetail: '',
	cause: 'Output stage **shorted** to ground',
	fix: 'Replace U4',
	body: 'Checked with the board unpowered and discharged.',
	tags: 'gate-driver, short',
	...extra
});

const entryOf = (id: string) => db.selectFrom('entry').selectAll().where('id', '=', id).executeTakeFirstOrThrow();
const countEntries = async () => Number((await db.selectFrom('entry').select((eb) => eb.fn.countAll<string>().as('n')).executeTakeFirstOrThrow()).n);

function parse(html: string) {
	const doc = new window.DOMParser().parseFromString(html, 'text/html');
	return doc;
}

/** Mail sent since `since` (the mailbox's length before; it keeps the oldest first), once it has arrived. */
async function mailSince(since: number, count: number): Promise<readonly StoredMessage[]> {
	const deadline = Date.now() + 5000;
	for (;;) {
		const got = mail.messages().slice(since);
		if (got.length >= count || Date.now() > deadline) return got;
		await new Promise((r) => setTimeout(r, 50));
	}
}

async function createViaForm(as: Who, extra: Record<string, string> = {}): Promise<string> {
	const res = await call(app, as, 'POST', `/o/${SLUG}/entries/new?/create`, form(extra));
	expect(res.status, res.text.slice(0, 300)).toBe(303);
	const id = /\/entries\/([0-9a-f-]{36})\/edit/.exec(res.location ?? '')?.[1];
	expect(id).toBeDefined();
	return id!;
}

describe('the editor without script', () => {
	it('creates a draft written by the caller and opens its edit page', async () => {
		const id = await createViaForm(who.contributor);
		const row = await entryOf(id);
		expect(row).toMatchObject({ status: 'draft', version: 1, authorId: who.contributor.userId, testPoint: 'U4 pin 7 ↔ GND', tags: ['gate-driver', 'short'] });
		const page = await call(app, who.contributor, 'GET', `/o/${SLUG}/entries/${id}/edit`);
		expect(page.status).toBe(200);
		const doc = parse(page.text);
		expect((doc.querySelector('#entry-title') as unknown as HTMLInputElement).value).toBe('Gate driver U4 output stuck low');
		// The stored Markdown is shown rendered by the server before any script runs.
		expect(doc.querySelector('[data-testid="entry-preview"] .entry-markdown strong')?.textContent).toBe('shorted');
	});

	it('refuses invalid input with a message beside each field and gives back everything typed', async () => {
		const before = await countEntries();
		const typed = form({ title: '   ', componentKind: 'valve', tags: 'Gate Driver!, ok', body: 'Keep <b>this</b> & "that"\nsecond line' });
		const res = await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/new?/create`, typed);
		expect(res.status).toBe(400);
		const doc = parse(res.text);
		expect(doc.querySelector('#entry-title-error')?.textContent).toBe('Enter a title.');
		expect(doc.querySelector('#entry-componentKind-error')?.textContent).toBe('Choose the kind of component.');
		expect(doc.querySelector('#entry-tags-error')?.textContent).toContain('lowercase letters, digits and hyphens');
		expect(doc.querySelector('#entry-title')?.getAttribute('aria-invalid')).toBe('true');
		// Nothing typed is lost, HTML included (as text).
		expect((doc.querySelector('#entry-body') as unknown as HTMLTextAreaElement).value).toBe(typed.body);
		expect((doc.querySelector('#entry-tags') as unknown as HTMLInputElement).value).toBe(typed.tags);
		expect((doc.querySelector('#entry-fix') as unknown as HTMLTextAreaElement).value).toBe('Replace U4');
		expect(doc.querySelector('#entry-body-error')).toBeNull();
		expect(await countEntries()).toBe(before);
	});

	it('shows a stale save as a conflict with both versions, writes nothing, and "keep mine" saves a new version', async () => {
		const id = await createViaForm(who.contributor);
		// Someone (here an author) saves version 2 first.
		const theirs = await call(app, who.author, 'PATCH', `/api/v1/orgs/${SLUG}/entries/${id}`, { json: { version: 1, fix: 'Replace U4 and R12' } });
		expect(theirs.status).toBe(200);
		const stale = await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/${id}/edit?/save`, form({ version: '1', fix: 'Replace U4 with a new part' }));
		expect(stale.status).toBe(409);
		const doc = parse(stale.text);
		expect(doc.querySelector('[data-testid="conflict-yours"]')?.textContent).toBe('Replace U4 with a new part');
		expect(doc.querySelector('[data-testid="conflict-theirs"]')?.textContent).toBe('Replace U4 and R12');
		expect((doc.querySelector('#entry-fix') as unknown as HTMLTextAreaElement).value).toBe('Replace U4 with a new part');
		expect(await entryOf(id)).toMatchObject({ version: 2, fix: 'Replace U4 and R12' });
		const keep = doc.querySelector('button[name="overwrite"]');
		expect(keep?.getAttribute('value')).toBe('2');
		const kept = await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/${id}/edit?/save`, form({ version: '1', overwrite: '2', fix: 'Replace U4 with a new part' }));
		expect(kept.status).toBe(200);
		expect(await entryOf(id)).toMatchObject({ version: 3, fix: 'Replace U4 with a new part' });
		const revisions = await db.selectFrom('entryRevision').select('version').where('entryId', '=', id).orderBy('version').execute();
		expect(revisions.map((r) => r.version)).toEqual([1, 2, 3]);
	});

	it('lets contributors edit only their own drafts', async () => {
		const id = await createViaForm(who.contributor);
		expect((await call(app, who.contributor2, 'GET', `/o/${SLUG}/entries/${id}/edit`)).status).toBe(404);
		expect((await call(app, who.contributor2, 'POST', `/o/${SLUG}/entries/${id}/edit?/save`, form({ version: '1', fix: 'x' }))).status).toBe(404);
		expect((await call(app, who.author, 'GET', `/o/${SLUG}/entries/${id}/edit`)).status).toBe(200);
		expect((await call(app, who.viewer, 'GET', `/o/${SLUG}/entries/new`)).status).toBe(403);
	});
});

describe('autosave through the API', () => {
	it('saves over the version it names and refuses a stale one with both versions (409)', async () => {
		const created = await call(app, who.contributor, 'POST', `/api/v1/orgs/${SLUG}/entries`, { json: form() });
		expect(created.status).toBe(201);
		const id = (created.json() as { entry: { id: string } }).entry.id;
		const first = await call(app, who.contributor, 'PATCH', `/api/v1/orgs/${SLUG}/entries/${id}`, { json: { ...form(), version: 1, body: 'first autosave' } });
		expect((first.json() as { entry: { version: number } }).entry.version).toBe(2);
		const stale = await call(app, who.contributor, 'PATCH', `/api/v1/orgs/${SLUG}/entries/${id}`, { json: { ...form(), version: 1, body: 'from another tab' } });
		expect(stale.status).toBe(409);
		const body = stale.json() as { error: { code: string }; current: { version: number; body: string }; yours: { body: string } };
		expect(body.error.code).toBe('conflict');
		expect(body.current).toMatchObject({ version: 2, body: 'first autosave' });
		expect(body.yours.body).toBe('from another tab');
		expect(await entryOf(id)).toMatchObject({ version: 2, body: 'first autosave' });
	});
});

describe('review', () => {
	it('mails every author and admin when a draft is submitted, and shows them a badge', async () => {
		const id = await createViaForm(who.contributor, { title: 'Bridge rectifier D3 leaky' });
		const since = mail.messages().length;
		const res = await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/${id}/edit?/submit`, form({ title: 'Bridge rectifier D3 leaky', version: '1' }));
		expect(res.status, res.text.slice(0, 300)).toBe(303);
		expect(res.location).toBe(`/o/${SLUG}/entries/${id}/edit?submitted=3`);
		expect((await entryOf(id)).status).toBe('in_review');
		const sent = await mailSince(since, 3);
		const to = sent.flatMap((m) => m.to).sort();
		expect(to).toEqual([who.admin.email, who.author.email, who.author2.email].sort());
		for (const m of sent) {
			expect(m.subject).toBe('Review: Bridge rectifier D3 leaky');
			expect(m.text).toContain('Bench contributor submitted an entry for review in Writing Bench');
			expect(m.links).toContain(`${app.url}/o/${SLUG}/entries/${id}`);
		}
		// The badge: authors and admins see how many wait; contributors see no review section.
		const authorHome = parse((await call(app, who.author, 'GET', `/o/${SLUG}`)).text);
		const inQueue = Number((await db.selectFrom('entry').select((eb) => eb.fn.countAll<string>().as('n')).where('status', '=', 'in_review').executeTakeFirstOrThrow()).n);
		expect(authorHome.querySelector('[data-testid="nav-badge"]')?.textContent?.trim()).toBe(`${inQueue} waiting`);
		const contributorHome = parse((await call(app, who.contributor, 'GET', `/o/${SLUG}`)).text);
		expect(contributorHome.querySelector('[data-testid="nav-badge"]')).toBeNull();
		// The writer can look at it but not change it while it waits.
		const locked = await call(app, who.contributor, 'GET', `/o/${SLUG}/entries/${id}/edit`);
		expect(parse(locked.text).querySelector('[data-testid="locked-notice"]')?.textContent).toContain('waiting for review');
		expect((await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/${id}/edit?/save`, form({ version: '1', fix: 'changed' }))).status).toBe(403);
	});

	it('sends back with a required comment the writer reads by mail and on the edit page; then publishes', async () => {
		const id = await createViaForm(who.contributor, { title: 'Snubber C9 open' });
		await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/${id}/edit?/submit`, form({ title: 'Snubber C9 open', version: '1' }));
		expect((await call(app, who.contributor, 'POST', `/o/${SLUG}/review?/publish`, { id })).status).toBe(403);
		expect((await call(app, who.contributor, 'GET', `/o/${SLUG}/review`)).status).toBe(403);
		const queue = parse((await call(app, who.author, 'GET', `/o/${SLUG}/review`)).text);
		expect([...queue.querySelectorAll('[data-testid="review-item"] h2')].map((h) => h.textContent)).toContain('Snubber C9 open');

		const empty = await call(app, who.author, 'POST', `/o/${SLUG}/review?/return`, { id, comment: '  ' });
		expect(empty.status).toBe(400);
		expect(parse(empty.text).querySelector(`#comment-${id}-error`)?.textContent).toBe('Enter what should change.');
		expect((await entryOf(id)).status).toBe('in_review');

		const since = mail.messages().length;
		const comment = 'Add the known-good curve of C10 <for comparison> & the ESR reading.';
		const back = await call(app, who.author, 'POST', `/o/${SLUG}/review?/return`, { id, comment });
		expect(back.status).toBe(200);
		expect(await entryOf(id)).toMatchObject({ status: 'draft', reviewComment: comment, reviewerId: who.author.userId });
		const [told] = await mailSince(since, 1);
		expect(told.to).toEqual([who.contributor.email]);
		expect(told.subject).toBe('Sent back: Snubber C9 open');
		expect(told.text).toContain(`> ${comment}`);
		expect(told.html).toContain('&lt;for comparison&gt; &amp; the ESR');
		expect(told.links).toContain(`${app.url}/o/${SLUG}/entries/${id}/edit`);
		const edit = parse((await call(app, who.contributor, 'GET', `/o/${SLUG}/entries/${id}/edit`)).text);
		expect(edit.querySelector('[data-testid="review-comment"]')?.textContent).toContain(comment);
		expect(edit.querySelector('#entry-title')).not.toBeNull();

		// Changed and submitted again, the comment is gone; the author publishes; the writer hears it.
		const again = await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/${id}/edit?/submit`, form({ title: 'Snubber C9 open', version: '1', body: 'C10 known-good curve added.' }));
		expect(again.status).toBe(303);
		expect(await entryOf(id)).toMatchObject({ status: 'in_review', reviewComment: null, version: 2 });
		const beforePublish = mail.messages().length;
		const published = await call(app, who.author2, 'POST', `/o/${SLUG}/review?/publish`, { id });
		expect(published.status).toBe(200);
		expect(await entryOf(id)).toMatchObject({ status: 'published', reviewerId: who.author2.userId });
		const [news] = await mailSince(beforePublish, 1);
		expect(news).toMatchObject({ to: [who.contributor.email], subject: 'Published: Snubber C9 open' });
		// Publishing twice is refused with a message, not an error page.
		const twice = await call(app, who.author, 'POST', `/o/${SLUG}/review?/publish`, { id });
		expect(twice.status).toBe(409);
		expect(twice.text).toContain('no longer in a state that allows this');
	});

	it('keeps the queue and its actions inside the organisation', async () => {
		const other = (await insertOrg(db, { name: 'Other bench', slug: 'other-writing' }))!;
		const outsider = await sessionFor(db, 'outsider@other.example');
		await insertMembership(db, { orgId: other.id, userId: outsider.userId, role: 'admin' });
		const mine = await createEntry(db, { userId: who.contributor.userId, orgId, orgSlug: SLUG, orgName: 'Writing Bench', role: 'contributor', via: 'session' }, entryCreate.parse(form()));
		expect((await call(app, outsider, 'POST', `/o/other-writing/review?/publish`, { id: mine.id })).status).toBe(404);
		expect((await entryOf(mine.id)).status).toBe('draft');
		expect((await call(app, outsider, 'GET', `/o/other-writing/entries/${mine.id}/edit`)).status).toBe(404);
	});
});

describe('the Markdown preview endpoint', () => {
	const preview = (as: Caller, json: unknown) => call(app, as, 'POST', `/api/v1/orgs/${SLUG}/markdown/preview`, { json });

	it('renders with the entry renderer and sanitiser, so hostile input cannot run', async () => {
		// Vectors: OWASP "XSS Filter Evasion Cheat Sheet" (the classic script tag, an image error
		// handler, a javascript: URL), recalled from memory; plus a foreign image, which the
		// product's own rule shows as its alt text.
		const res = await preview(who.contributor, {
			symptom: 'Fuse *blows* <img src=x onerror=alert(1)>',
			body: [
				'<script>alert(1)</script>',
				'<img src=x onerror=alert(2)>',
				'[click](javascript:alert(3))',
				'![far away](https://xss.example/p.png)',
				`![ours](/api/v1/orgs/${SLUG}/photos/7d6f3f0e-3c1a-4b8e-9a51-2f0c7e4b9d21)`,
				'# Heading'
			].join('\n\n')
		});
		expect(res.status).toBe(200);
		const html = (res.json() as { html: { symptom: string; body: string } }).html;
		const body = parse(`<div>${html.body}</div>`);
		expect(body.querySelectorAll('script, iframe, object, embed')).toHaveLength(0);
		expect([...body.querySelectorAll('*')].filter((el) => [...el.attributes].some((a) => a.name.startsWith('on')))).toHaveLength(0);
		expect([...body.querySelectorAll('a')].map((a) => a.getAttribute('href'))).not.toContainEqual(expect.stringMatching(/^javascript:/i));
		expect([...body.querySelectorAll('img')].map((i) => i.getAttribute('src'))).toEqual([`/api/v1/orgs/${SLUG}/photos/7d6f3f0e-3c1a-4b8e-9a51-2f0c7e4b9d21`]);
		// Typed HTML stays visible as text; headings start at h2 (the page owns the h1).
		expect(body.body.textContent).toContain('<script>alert(1)</script>');
		expect(body.querySelector('h2')?.textContent).toBe('Heading');
		const symptom = parse(`<div>${html.symptom}</div>`);
		expect(symptom.querySelector('em')?.textContent).toBe('blows');
		expect(symptom.querySelectorAll('img')).toHaveLength(0);
	});

	it('refuses text over the stored limits, non-JSON, oversized bodies and viewers', async () => {
		const long = await preview(who.contributor, { body: 'x'.repeat(LIMITS.body + 1) });
		expect(long.status).toBe(400);
		expect((long.json() as { error: { issues: { path: string }[] } }).error.issues.map((i) => i.path)).toEqual(['body']);
		const bad = await fetch(`${app.url}/api/v1/orgs/${SLUG}/markdown/preview`, {
			method: 'POST',
			headers: { cookie: who.contributor.cookie!, 'content-type': 'application/json', origin: app.url },
			body: '{"body":'
		});
		expect(bad.status).toBe(400);
		const huge = await preview(who.contributor, { body: 'y'.repeat(600 * 1024) });
		expect(huge.status).toBe(413);
		expect((await preview(who.viewer, { body: 'hello' })).status).toBe(403);
	});
});
