import { sql } from 'kysely';
import { Window } from 'happy-dom';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { entryCreate } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import type { Role } from '../../src/lib/server/auth/permissions';
import { ensureUser } from '../../src/lib/server/auth/users';
import { assertMigrated, createMigrator } from '../../src/lib/server/db/migrate';
import { findEntry } from '../../src/lib/server/entries/queries';
import { listReviewEvents } from '../../src/lib/server/entries/review-history';
import { maySeeReview, readerFor } from '../../src/lib/server/entries/rules';
import { createEntry, transitionEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { type AppServer, call, type Caller, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * The review history of an entry: one event per status change, written with the change, read back
 * in the order it happened, scoped to the organisation, shown only to those who could read the
 * review comment before (authors, admins, the writer), and the migration's backfill of the
 * comments stored before the history existed.
 */
const db = openTestDb();
afterAll(() => db.destroy());

async function member(orgId: string, orgSlug: string, role: Role, email: string): Promise<MemberContext> {
	const user = await ensureUser(db, { email, name: `Bench ${email.split('@')[0]}` });
	await insertMembership(db, { orgId, userId: user.id, role });
	return { userId: user.id, orgId, orgSlug, orgName: orgSlug, role, via: 'session' };
}

const fields = (overrides: Record<string, unknown> = {}) =>
	entryCreate.parse({
		title: 'Input bridge diode reads as a resistor',
		componentKind: 'diode',
		symptom: 'Slope instead of a knee at 10 V · 1 kΩ · 60 Hz',
		...overrides
	});

const steps = async (orgId: string, entryId: string) =>
	(await listReviewEvents(db, orgId, entryId)).map((e) => ({ transition: e.transition, from: e.fromStatus, to: e.toStatus, actorId: e.actorId, comment: e.comment }));

describe('review events', () => {
	let a: Record<'admin' | 'author' | 'contributor' | 'contributor2' | 'viewer', MemberContext>;
	let b: { author: MemberContext; contributor: MemberContext };

	beforeEach(async () => {
		await truncateAll(db);
		const orgA = (await insertOrg(db, { name: 'Review Bench A', slug: 'review-a' }))!;
		const orgB = (await insertOrg(db, { name: 'Review Bench B', slug: 'review-b' }))!;
		a = {
			admin: await member(orgA.id, orgA.slug, 'admin', 'admin@review-a.example'),
			author: await member(orgA.id, orgA.slug, 'author', 'author@review-a.example'),
			contributor: await member(orgA.id, orgA.slug, 'contributor', 'contrib@review-a.example'),
			contributor2: await member(orgA.id, orgA.slug, 'contributor', 'contrib2@review-a.example'),
			viewer: await member(orgA.id, orgA.slug, 'viewer', 'viewer@review-a.example')
		};
		b = {
			author: await member(orgB.id, orgB.slug, 'author', 'author@review-b.example'),
			contributor: await member(orgB.id, orgB.slug, 'contributor', 'contrib@review-b.example')
		};
	});

	it('records every transition in the order it happened, with who did it and what they wrote', async () => {
		const { id } = await createEntry(db, a.contributor, fields());
		expect(await listReviewEvents(db, a.author.orgId, id)).toEqual([]);
		await transitionEntry(db, a.contributor, id, 'submit', '');
		await transitionEntry(db, a.author, id, 'return', 'Attach the known-good curve from a working board.');
		await transitionEntry(db, a.contributor, id, 'submit', '');
		await transitionEntry(db, a.admin, id, 'return', 'Still missing:\nthe test conditions of the second curve.');
		await transitionEntry(db, a.contributor, id, 'submit', '');
		await transitionEntry(db, a.author, id, 'publish', '');
		await transitionEntry(db, a.author, id, 'archive', '');
		await transitionEntry(db, a.admin, id, 'reopen', '');
		expect(await steps(a.author.orgId, id)).toEqual([
			{ transition: 'submit', from: 'draft', to: 'in_review', actorId: a.contributor.userId, comment: null },
			{ transition: 'return', from: 'in_review', to: 'draft', actorId: a.author.userId, comment: 'Attach the known-good curve from a working board.' },
			{ transition: 'submit', from: 'draft', to: 'in_review', actorId: a.contributor.userId, comment: null },
			{ transition: 'return', from: 'in_review', to: 'draft', actorId: a.admin.userId, comment: 'Still missing:\nthe test conditions of the second curve.' },
			{ transition: 'submit', from: 'draft', to: 'in_review', actorId: a.contributor.userId, comment: null },
			{ transition: 'publish', from: 'in_review', to: 'published', actorId: a.author.userId, comment: null },
			{ transition: 'archive', from: 'published', to: 'archived', actorId: a.author.userId, comment: null },
			{ transition: 'reopen', from: 'archived', to: 'draft', actorId: a.admin.userId, comment: null }
		]);
		const events = await listReviewEvents(db, a.author.orgId, id);
		// Each event carries the actor's name and a time that never goes backwards.
		expect(events[1].actorName).toBe('Bench author');
		for (let k = 1; k < events.length; k++) expect(events[k].at.getTime()).toBeGreaterThanOrEqual(events[k - 1].at.getTime());
	});

	it('keeps the latest send-back comment on the entry for its existing readers, and stamps the event with the change', async () => {
		const { id } = await createEntry(db, a.contributor, fields());
		const submitted = await transitionEntry(db, a.contributor, id, 'submit', '');
		expect(submitted.kind).toBe('done');
		const [submitEvent] = await listReviewEvents(db, a.author.orgId, id);
		// One clock reading for the change and its event: they were written in one transaction.
		expect(submitEvent.at.getTime()).toBe(submitted.kind === 'done' ? submitted.entry.submittedAt?.getTime() : NaN);
		await transitionEntry(db, a.author, id, 'return', '  First: add the part number.  ');
		await transitionEntry(db, a.contributor, id, 'submit', '');
		await transitionEntry(db, a.author, id, 'return', 'Second: say which probe was on GND.');
		const entry = await findEntry(db, a.author.orgId, id, readerFor(a.author));
		expect(entry?.reviewComment).toBe('Second: say which probe was on GND.');
		const comments = (await listReviewEvents(db, a.author.orgId, id)).flatMap((e) => (e.comment ? [e.comment] : []));
		expect(comments).toEqual(['First: add the part number.', 'Second: say which probe was on GND.']);
	});

	it('writes nothing when a change is refused', async () => {
		const { id } = await createEntry(db, a.contributor, fields());
		expect(await transitionEntry(db, a.contributor, id, 'publish', '')).toEqual({ kind: 'refused', reason: 'forbidden' });
		expect(await transitionEntry(db, a.author, id, 'return', 'Not in review yet')).toEqual({ kind: 'refused', reason: 'wrong_status' });
		await transitionEntry(db, a.contributor, id, 'submit', '');
		expect(await transitionEntry(db, a.author, id, 'return', '   ')).toEqual({ kind: 'refused', reason: 'comment_required' });
		expect(await transitionEntry(db, b.author, id, 'return', 'From another organisation')).toEqual({ kind: 'not_found' });
		expect((await steps(a.author.orgId, id)).map((s) => s.transition)).toEqual(['submit']);
	});

	it("never lists or accepts another organisation's events", async () => {
		const { id: idB } = await createEntry(db, b.contributor, fields({ title: 'Org B only' }));
		await transitionEntry(db, b.contributor, idB, 'submit', '');
		await transitionEntry(db, b.author, idB, 'return', 'Org B private comment');
		expect(await listReviewEvents(db, b.author.orgId, idB)).toHaveLength(2);
		expect(await listReviewEvents(db, a.author.orgId, idB)).toEqual([]);
		// The database itself refuses an event whose organisation is not its entry's.
		await expect(
			db
				.insertInto('entryReviewEvent')
				.values({ orgId: a.author.orgId, entryId: idB, actorId: a.author.userId, transition: 'return', fromStatus: 'in_review', toStatus: 'draft', comment: 'smuggled' })
				.execute()
		).rejects.toMatchObject({ code: '23503' });
		// …and a send-back without its comment.
		await expect(
			db
				.insertInto('entryReviewEvent')
				.values({ orgId: b.author.orgId, entryId: idB, actorId: b.author.userId, transition: 'return', fromStatus: 'in_review', toStatus: 'draft', comment: null })
				.execute()
		).rejects.toMatchObject({ code: '23514' });
	});

	it('is for authors, admins and the writer only', () => {
		const entry = { authorId: a.contributor.userId };
		expect(maySeeReview(a.author, entry)).toBe(true);
		expect(maySeeReview(a.admin, entry)).toBe(true);
		expect(maySeeReview(a.contributor, entry)).toBe(true);
		expect(maySeeReview(a.contributor2, entry)).toBe(false);
		expect(maySeeReview(a.viewer, entry)).toBe(false);
		expect(maySeeReview(a.viewer, { authorId: a.viewer.userId })).toBe(false);
		expect(maySeeReview(a.contributor, { authorId: null })).toBe(false);
	});
});

describe('the review history migration', () => {
	const NAME = '2026_12_03_100000_create_entry_review_event';

	afterAll(async () => {
		// Leave the database fully migrated for the files that run after this one.
		assertMigrated(await createMigrator(db).migrateToLatest());
	});

	it('turns each stored latest comment into a send-back event and leaves entries without one alone', async () => {
		await truncateAll(db);
		const migrator = createMigrator(db);
		const all = await migrator.getMigrations();
		const at = all.findIndex((m) => m.name === NAME);
		expect(at).toBeGreaterThan(0);
		assertMigrated(await migrator.migrateTo(all[at - 1].name));

		const org = (await insertOrg(db, { name: 'Old Bench', slug: 'old-bench' }))!;
		const writer = await ensureUser(db, { email: 'writer@old.example', name: 'Old writer' });
		const reviewer = await ensureUser(db, { email: 'reviewer@old.example', name: 'Old reviewer' });
		const { rows } = await sql<{ id: string; title: string }>`
			insert into entry (org_id, title, component_kind, symptom, status, author_id, reviewer_id, review_comment, submitted_at, updated_at)
			values
				(${org.id}, 'Returned once', 'diode', 'Knee too soft', 'draft', ${writer.id}, ${reviewer.id}, ${'Measure the leakage too.\nAt 10 V.'}, '2026-11-20T10:00:00Z', '2026-11-22T09:00:00Z'),
				(${org.id}, 'Never returned', 'resistor', 'Slope too steep', 'in_review', ${writer.id}, null, null, '2026-11-21T10:00:00Z', '2026-11-21T10:00:00Z')
			returning id, title
		`.execute(db);
		const returned = rows.find((r) => r.title === 'Returned once')!;
		// The writer saved a new version the day after the send-back: the comment is older than that save.
		await sql`
			insert into entry_revision (org_id, entry_id, version, snapshot, saved_by, saved_at)
			values (${org.id}, ${returned.id}, 1, '{}'::jsonb, ${writer.id}, '2026-11-19T08:00:00Z'),
				(${org.id}, ${returned.id}, 2, '{}'::jsonb, ${writer.id}, '2026-11-21T15:00:00Z')
		`.execute(db);

		assertMigrated(await migrator.migrateToLatest());
		const events = await db.selectFrom('entryReviewEvent').selectAll().execute();
		expect(events).toHaveLength(1);
		expect(events[0]).toMatchObject({
			orgId: org.id,
			entryId: returned.id,
			actorId: reviewer.id,
			transition: 'return',
			fromStatus: 'in_review',
			toStatus: 'draft',
			comment: 'Measure the leakage too.\nAt 10 V.'
		});
		expect(events[0].createdAt.toISOString()).toBe('2026-11-21T15:00:00.000Z');
		// The entry keeps its latest comment as before.
		const entry = await db.selectFrom('entry').select('reviewComment').where('id', '=', returned.id).executeTakeFirstOrThrow();
		expect(entry.reviewComment).toBe('Measure the leakage too.\nAt 10 V.');
	});
});

describe('the review history over HTTP', () => {
	let app: AppServer;
	const SLUG = 'review-http';
	type Who = Caller & { userId: string };
	const who = {} as Record<'author' | 'contributor' | 'contributor2' | 'viewer' | 'outsider', Who>;
	const window = new Window();
	const parse = (html: string) => new window.DOMParser().parseFromString(html, 'text/html');
	let draftId = '';
	let publishedId = '';
	let freshId = '';

	beforeAll(async () => {
		await truncateAll(db);
		app = await startAppServer({ DATABASE_URL: testDatabaseUrl(), AUTH_SECRET: 'review-history-test-secret-long-enough-0123456789' });
		const org = (await insertOrg(db, { name: 'Review HTTP', slug: SLUG }))!;
		const other = (await insertOrg(db, { name: 'Elsewhere', slug: 'review-elsewhere' }))!;
		const roles = { author: 'author', contributor: 'contributor', contributor2: 'contributor', viewer: 'viewer' } as const;
		const members = {} as Record<keyof typeof roles, MemberContext>;
		for (const [key, role] of Object.entries(roles) as [keyof typeof roles, Role][]) {
			const session = await sessionFor(db, `${key}@review-http.example`, `Bench ${key}`);
			who[key] = session;
			await insertMembership(db, { orgId: org.id, userId: session.userId, role });
			members[key] = { userId: session.userId, orgId: org.id, orgSlug: SLUG, orgName: 'Review HTTP', role, via: 'session' };
		}
		who.outsider = await sessionFor(db, 'outsider@review-http.example', 'Outsider');
		await insertMembership(db, { orgId: other.id, userId: who.outsider.userId, role: 'admin' });

		draftId = (await createEntry(db, members.contributor, fields({ title: 'Sent back twice' }))).id;
		publishedId = (await createEntry(db, members.contributor, fields({ title: 'Published after review' }))).id;
		for (const id of [draftId, publishedId]) {
			await transitionEntry(db, members.contributor, id, 'submit', '');
			await transitionEntry(db, members.author, id, 'return', 'First send-back: <b>add</b> the known-good curve.');
			await transitionEntry(db, members.contributor, id, 'submit', '');
			await transitionEntry(db, members.author, id, 'return', 'Second send-back:\nname the test point.');
		}
		await transitionEntry(db, members.contributor, publishedId, 'submit', '');
		await transitionEntry(db, members.author, publishedId, 'publish', '');
		freshId = (await createEntry(db, members.author, fields({ title: 'Fresh draft, never reviewed' }))).id;
	}, 120_000);

	afterAll(async () => {
		await app?.stop();
		await window.happyDOM.close();
	});

	const historyOf = (html: string) => {
		const section = parse(html).querySelector('#review-history');
		if (!section) return null;
		return [...section.querySelectorAll('[data-testid="review-event"]')].map((li) => ({
			text: li.querySelector('p')?.textContent?.replace(/\s+/g, ' ').trim(),
			datetime: li.querySelector('time')?.getAttribute('datetime'),
			comment: li.querySelector('[data-testid="review-event-comment"]')?.textContent ?? null
		}));
	};

	it('lists both send-backs on the entry page for the writer, oldest first, with names, times and the comments as text', async () => {
		const res = await call(app, who.contributor, 'GET', `/o/${SLUG}/entries/${draftId}`);
		expect(res.status).toBe(200);
		const history = historyOf(res.text);
		expect(history?.map((h) => h.text?.replace(/ · .*/, ''))).toEqual([
			'Bench contributor submitted it for review',
			'Bench author sent it back',
			'Bench contributor submitted it for review',
			'Bench author sent it back'
		]);
		expect(history?.[1].comment).toBe('First send-back: <b>add</b> the known-good curve.');
		expect(history?.[3].comment).toBe('Second send-back:\nname the test point.');
		// The markup in a comment is shown as typed, never run as HTML.
		expect(parse(res.text).querySelector('#review-history b')).toBeNull();
		for (const h of history ?? []) {
			expect(h.datetime).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/);
			expect(h.text).toMatch(/\d{1,2} [A-Z][a-z]{2} \d{4}, \d\d:\d\d UTC$/);
		}
	});

	it('shows the history to authors, and the empty state when there is none', async () => {
		expect(historyOf((await call(app, who.author, 'GET', `/o/${SLUG}/entries/${publishedId}`)).text)).toHaveLength(6);
		const page = parse((await call(app, who.author, 'GET', `/o/${SLUG}/entries/${freshId}`)).text);
		expect(page.querySelector('#review-history [data-testid="review-history-empty"]')?.textContent).toContain('No review yet');
	});

	it("hides the history from viewers and from other contributors, and drafts' history entirely from viewers", async () => {
		// A published entry: readable, but its review is not theirs to read.
		for (const reader of [who.viewer, who.contributor2]) {
			const page = await call(app, reader, 'GET', `/o/${SLUG}/entries/${publishedId}`);
			expect(page.status).toBe(200);
			expect(historyOf(page.text)).toBeNull();
			expect(page.text).not.toContain('Second send-back');
			const api = await call(app, reader, 'GET', `/api/v1/orgs/${SLUG}/entries/${publishedId}`);
			expect(api.status).toBe(200);
			expect(api.json()).not.toHaveProperty('reviewHistory');
		}
		// A draft: the viewer cannot even learn that it exists.
		expect((await call(app, who.viewer, 'GET', `/o/${SLUG}/entries/${draftId}`)).status).toBe(404);
		expect((await call(app, who.viewer, 'GET', `/api/v1/orgs/${SLUG}/entries/${draftId}`)).status).toBe(404);
		expect((await call(app, who.outsider, 'GET', `/api/v1/orgs/${SLUG}/entries/${draftId}`)).status).toBe(404);
	});

	it('adds the history to the JSON of an entry for those who may read it', async () => {
		const api = await call(app, who.contributor, 'GET', `/api/v1/orgs/${SLUG}/entries/${publishedId}`);
		expect(api.status).toBe(200);
		const body = api.json() as { reviewHistory: { action: string; from: string; to: string; by: { id: string; name: string } | null; comment: string | null; at: string }[] };
		expect(body.reviewHistory.map((e) => e.action)).toEqual(['submit', 'return', 'submit', 'return', 'submit', 'publish']);
		expect(body.reviewHistory[3]).toMatchObject({ from: 'in_review', to: 'draft', by: { id: who.author.userId, name: 'Bench author' }, comment: 'Second send-back:\nname the test point.' });
		expect(new Date(body.reviewHistory[5].at).toISOString()).toBe(body.reviewHistory[5].at);
	});

	it('keeps the latest send-back notice in the editor and puts the whole history one press away', async () => {
		const res = await call(app, who.contributor, 'GET', `/o/${SLUG}/entries/${draftId}/edit`);
		expect(res.status).toBe(200);
		const doc = parse(res.text);
		expect(doc.querySelector('[data-testid="review-comment"]')?.textContent).toContain('Second send-back:');
		expect(doc.querySelector('[data-testid="review-comment"]')?.textContent).not.toContain('First send-back');
		const details = doc.querySelector('details[data-testid="editor-review-history"]');
		expect(details?.querySelector('summary')?.textContent).toContain('4 steps');
		const comments = [...(details?.querySelectorAll('[data-testid="review-event-comment"]') ?? [])].map((c) => c.textContent);
		expect(comments).toEqual(['First send-back: <b>add</b> the known-good curve.', 'Second send-back:\nname the test point.']);
		expect(details?.querySelector('a')?.getAttribute('href')).toBe(`/o/${SLUG}/entries/${draftId}#review-history`);
	});

	it('records a send-back made through the entry page form', async () => {
		const submit = await call(app, who.contributor, 'POST', `/o/${SLUG}/entries/${draftId}?/transition`, { action: 'submit' });
		expect(submit.status).toBe(200);
		const ret = await call(app, who.author, 'POST', `/o/${SLUG}/entries/${draftId}?/transition`, { action: 'return', comment: 'Third: crop the photo.' });
		expect(ret.status).toBe(200);
		const history = historyOf((await call(app, who.author, 'GET', `/o/${SLUG}/entries/${draftId}`)).text);
		expect(history?.slice(-2).map((h) => h.comment)).toEqual([null, 'Third: crop the photo.']);
	});
});
