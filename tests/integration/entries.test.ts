import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { entryCreate, entryListQuery } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import type { Role } from '../../src/lib/server/auth/permissions';
import { ensureUser } from '../../src/lib/server/auth/users';
import { findEntry, listEntries, listRevisions } from '../../src/lib/server/entries/queries';
import { readerFor } from '../../src/lib/server/entries/rules';
import { loadEntryDocuments } from '../../src/lib/server/entries/documents';
import { createEntry, deleteEntry, transitionEntry, updateEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());

async function member(orgId: string, orgSlug: string, role: Role, email: string): Promise<MemberContext> {
	const user = await ensureUser(db, { email, name: email.split('@')[0] });
	await insertMembership(db, { orgId, userId: user.id, role });
	return { userId: user.id, orgId, orgSlug, orgName: orgSlug, role, via: 'session' };
}

const fields = (overrides: Record<string, unknown> = {}) =>
	entryCreate.parse({
		title: 'Gate driver supply reads as a leaky capacitor',
		componentKind: 'electrolytic',
		symptom: 'Ellipse tilts towards a slope at 10 V · 1 kΩ · 60 Hz',
		tags: 'gate-driver, leaky',
		...overrides
	});

let a: { admin: MemberContext; author: MemberContext; contributor: MemberContext; viewer: MemberContext };
let b: { author: MemberContext };

beforeEach(async () => {
	await truncateAll(db);
	const orgA = (await insertOrg(db, { name: 'Bench A', slug: 'bench-a' }))!;
	const orgB = (await insertOrg(db, { name: 'Bench B', slug: 'bench-b' }))!;
	a = {
		admin: await member(orgA.id, orgA.slug, 'admin', 'admin@a.example'),
		author: await member(orgA.id, orgA.slug, 'author', 'author@a.example'),
		contributor: await member(orgA.id, orgA.slug, 'contributor', 'contrib@a.example'),
		viewer: await member(orgA.id, orgA.slug, 'viewer', 'viewer@a.example')
	};
	b = { author: await member(orgB.id, orgB.slug, 'author', 'author@b.example') };
});

describe('entry lifecycle', () => {
	it('creates a draft with revision 1 and a search outbox row in one transaction', async () => {
		const entry = await createEntry(db, a.contributor, fields());
		expect(entry).toMatchObject({ status: 'draft', version: 1, authorId: a.contributor.userId, tags: ['gate-driver', 'leaky'] });
		const revisions = await listRevisions(db, a.contributor.orgId, entry.id);
		expect(revisions.map((r) => r.version)).toEqual([1]);
		const outbox = await db.selectFrom('searchOutbox').select(['entityId', 'op']).execute();
		expect(outbox).toEqual([{ entityId: entry.id, op: 'upsert' }]);
	});

	it('goes draft → in review → returned with a comment → in review → published → archived', async () => {
		const { id } = await createEntry(db, a.contributor, fields());
		expect(await transitionEntry(db, a.contributor, id, 'publish', '')).toEqual({ kind: 'refused', reason: 'forbidden' });
		expect(await transitionEntry(db, a.contributor, id, 'submit', '')).toMatchObject({ kind: 'done', entry: { status: 'in_review' } });
		expect(await transitionEntry(db, a.author, id, 'return', '  ')).toEqual({ kind: 'refused', reason: 'comment_required' });
		const returned = await transitionEntry(db, a.author, id, 'return', 'Add the known-good trace from U12.');
		expect(returned).toMatchObject({ kind: 'done', entry: { status: 'draft', reviewComment: 'Add the known-good trace from U12.' } });
		await transitionEntry(db, a.contributor, id, 'submit', '');
		const published = await transitionEntry(db, a.author, id, 'publish', '');
		expect(published).toMatchObject({ kind: 'done', entry: { status: 'published', reviewerId: a.author.userId } });
		expect(await transitionEntry(db, a.author, id, 'submit', '')).toEqual({ kind: 'refused', reason: 'wrong_status' });
		expect(await transitionEntry(db, a.author, id, 'archive', '')).toMatchObject({ kind: 'done', entry: { status: 'archived' } });
	});

	it('lets a contributor edit only their own draft, and authors edit any entry', async () => {
		const mine = await createEntry(db, a.contributor, fields());
		const other = await createEntry(db, a.author, fields({ title: 'Written by the author' }));
		expect((await updateEntry(db, a.contributor, mine.id, { version: 1, title: 'Sharper title' })).kind).toBe('saved');
		// The author's draft is not visible to the contributor at all: 404, not 403.
		expect((await updateEntry(db, a.contributor, other.id, { version: 1, title: 'Hijack' })).kind).toBe('not_found');
		await transitionEntry(db, a.contributor, mine.id, 'submit', '');
		expect((await updateEntry(db, a.contributor, mine.id, { version: 2, title: 'Edit after submit' })).kind).toBe('forbidden');
		expect((await updateEntry(db, a.author, mine.id, { version: 2, title: 'Reviewer tidies it' })).kind).toBe('saved');
	});
});

describe('optimistic concurrency', () => {
	it('refuses a save based on an old version, writes nothing, and returns both versions', async () => {
		const { id } = await createEntry(db, a.author, fields());
		const first = await updateEntry(db, a.author, id, { version: 1, symptom: 'First save wins' });
		expect(first).toMatchObject({ kind: 'saved', entry: { version: 2 } });
		const stale = await updateEntry(db, a.admin, id, { version: 1, symptom: 'Second save from a stale form' });
		expect(stale.kind).toBe('conflict');
		if (stale.kind !== 'conflict') return;
		expect(stale.current).toMatchObject({ version: 2, symptom: 'First save wins' });
		expect(stale.yours.symptom).toBe('Second save from a stale form');
		const now = await findEntry(db, a.author.orgId, id, readerFor(a.author));
		expect(now).toMatchObject({ version: 2, symptom: 'First save wins' });
		expect((await listRevisions(db, a.author.orgId, id)).map((r) => r.version)).toEqual([2, 1]);
	});
});

describe('visibility and tenancy', () => {
	it('shows viewers only published entries and contributors their own drafts too', async () => {
		const draft = await createEntry(db, a.contributor, fields({ title: 'Contributor draft' }));
		const authorDraft = await createEntry(db, a.author, fields({ title: 'Author draft' }));
		const pub = await createEntry(db, a.author, fields({ title: 'Published one' }));
		await transitionEntry(db, a.author, pub.id, 'publish', '');
		const titles = async (m: MemberContext) =>
			(await listEntries(db, m.orgId, readerFor(m), entryListQuery.parse({ sort: 'title', order: 'asc' }))).entries.map((e) => e.title);
		expect(await titles(a.viewer)).toEqual(['Published one']);
		expect(await titles(a.contributor)).toEqual(['Contributor draft', 'Published one']);
		expect(await titles(a.author)).toEqual(['Author draft', 'Contributor draft', 'Published one']);
		expect(await findEntry(db, a.viewer.orgId, draft.id, readerFor(a.viewer))).toBeUndefined();
		expect(authorDraft.status).toBe('draft');
	});

	it('never reads or changes another organisation’s entry', async () => {
		const entry = await createEntry(db, a.author, fields());
		await transitionEntry(db, a.author, entry.id, 'publish', '');
		expect(await findEntry(db, b.author.orgId, entry.id, readerFor(b.author))).toBeUndefined();
		expect((await updateEntry(db, b.author, entry.id, { version: 1, title: 'Cross-tenant' })).kind).toBe('not_found');
		expect((await transitionEntry(db, b.author, entry.id, 'archive', '')).kind).toBe('not_found');
		expect(await deleteEntry(db, { ...b.author, role: 'admin' }, entry.id)).toBe(false);
		expect((await listEntries(db, b.author.orgId, readerFor(b.author), entryListQuery.parse({}))).entries).toEqual([]);
		expect(await findEntry(db, a.author.orgId, entry.id, readerFor(a.author))).toMatchObject({ title: entry.title, status: 'published' });
	});
});

describe('entry list', () => {
	it('filters by kind and tag and pages with a cursor without repeats or gaps', async () => {
		for (let k = 0; k < 7; k++) {
			await createEntry(db, a.author, fields({ title: `Entry ${k}`, componentKind: k % 2 ? 'diode' : 'resistor', tags: k % 3 ? 'motor-drive' : 'psu' }));
		}
		const reader = readerFor(a.author);
		const seen: string[] = [];
		let cursor: string | undefined;
		do {
			const page = await listEntries(db, a.author.orgId, reader, entryListQuery.parse({ limit: '3', sort: 'title', order: 'asc', cursor }));
			seen.push(...page.entries.map((e) => e.title));
			cursor = page.nextCursor ?? undefined;
		} while (cursor);
		expect(seen).toEqual([0, 1, 2, 3, 4, 5, 6].map((k) => `Entry ${k}`));
		const diodes = await listEntries(db, a.author.orgId, reader, entryListQuery.parse({ kind: 'diode' }));
		expect(diodes.entries.map((e) => e.title).sort()).toEqual(['Entry 1', 'Entry 3', 'Entry 5']);
		const psu = await listEntries(db, a.author.orgId, reader, entryListQuery.parse({ tag: 'psu' }));
		expect(psu.entries.map((e) => e.title).sort()).toEqual(['Entry 0', 'Entry 3', 'Entry 6']);
	});

	it('treats a tampered cursor as the first page and clamps the limit', async () => {
		await createEntry(db, a.author, fields());
		const q = entryListQuery.parse({ cursor: 'not-a-cursor', limit: '100000' });
		expect(q.limit).toBe(100);
		expect((await listEntries(db, a.author.orgId, readerFor(a.author), q)).entries).toHaveLength(1);
	});
});

describe('entry input rules', () => {
	it('refuses oversized fields and malformed tags with a message for each field', () => {
		const r = entryCreate.safeParse({ title: 'x'.repeat(161), componentKind: 'flux-capacitor', symptom: '', tags: ['Bad Tag!'] });
		expect(r.success).toBe(false);
		const paths = r.error!.issues.map((i) => i.path[0]);
		expect(paths).toEqual(expect.arrayContaining(['title', 'componentKind', 'symptom', 'tags']));
	});
});

describe('soft delete', () => {
	it('hides a deleted entry from everyone and queues its removal from the index', async () => {
		const { id } = await createEntry(db, a.author, fields());
		expect(await deleteEntry(db, a.admin, id)).toBe(true);
		expect(await findEntry(db, a.admin.orgId, id, readerFor(a.admin))).toBeUndefined();
		const ops = await db.selectFrom('searchOutbox').select('op').where('entityId', '=', id).orderBy('id').execute();
		expect(ops.map((o) => o.op)).toEqual(['upsert', 'delete']);
	});
});

describe('search documents', () => {
	it('carry the stripped text and tenancy fields, and a deleted entry no longer loads', async () => {
		const entry = await createEntry(db, a.author, fields({ cause: 'The **bus** capacitor [dried out](https://example.com/x).' }));
		const [doc] = await loadEntryDocuments(db, [entry.id]);
		expect(doc).toMatchObject({ id: entry.id, orgId: a.author.orgId, status: 'draft', authorId: a.author.userId, componentKind: 'electrolytic', class: null });
		expect(doc.cause).toBe('The bus capacitor dried out.');
		expect(doc.tags).toEqual(['gate-driver', 'leaky']);
		await deleteEntry(db, a.admin, entry.id);
		expect(await loadEntryDocuments(db, [entry.id])).toEqual([]);
	});
});
