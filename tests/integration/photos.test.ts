import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { entryCreate } from '../../src/lib/schemas/entries';
import { MAX_PHOTO_BYTES } from '../../src/lib/photos/image-check';
import { createEntry, transitionEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { type AppServer, call, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * Entry photos over HTTP, through the real hooks, guard and endpoints. The image files are
 * written by Chromium's canvas encoders (tests/fixtures/photos), not by this project.
 */
const db = openTestDb();
let app: AppServer;
const SLUG = 'photo-bench';
const OTHER = 'photo-other';
const who = {} as Record<'admin' | 'author' | 'contributor' | 'viewer' | 'outsider', { cookie: string; userId: string }>;
const PNG = readFileSync('tests/fixtures/photos/board-64x48.png');
const JPEG = readFileSync('tests/fixtures/photos/board-64x48.jpg');
const WEBP = readFileSync('tests/fixtures/photos/board-64x48.webp');
let orgId: string;

beforeAll(async () => {
	await truncateAll(db);
	app = await startAppServer({ DATABASE_URL: testDatabaseUrl(), AUTH_SECRET: 'photos-test-secret-that-is-long-enough-0123456789' });
	const org = (await insertOrg(db, { name: 'Photo bench', slug: SLUG }))!;
	const other = (await insertOrg(db, { name: 'Other bench', slug: OTHER }))!;
	orgId = org.id;
	for (const role of ['admin', 'author', 'contributor', 'viewer'] as const) {
		who[role] = await sessionFor(db, `${role}@photos.example`, role);
		await insertMembership(db, { orgId: org.id, userId: who[role].userId, role });
	}
	who.outsider = await sessionFor(db, 'admin@other.example', 'outsider');
	await insertMembership(db, { orgId: other.id, userId: who.outsider.userId, role: 'admin' });
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await db.destroy();
});

const base = `/api/v1/orgs/${SLUG}`;
const as = (role: keyof typeof who) => ({ userId: who[role].userId, orgId, orgSlug: SLUG, orgName: 'Photo bench', role: role === 'outsider' ? ('admin' as const) : role, via: 'session' as const });

async function entry(role: 'contributor' | 'author', publish = false) {
	const e = await createEntry(db, as(role), entryCreate.parse({ title: `Board ${Math.random()}`, componentKind: 'capacitor', symptom: 'Bulging top' }));
	if (publish) await transitionEntry(db, as('author'), e.id, 'publish', '');
	return e.id;
}

async function upload(role: keyof typeof who, entryId: string, bytes: Uint8Array, name: string, declaredType = 'application/octet-stream', slug = SLUG) {
	const form = new FormData();
	form.set('photo', new File([new Uint8Array(bytes)], name, { type: declaredType }));
	const res = await fetch(`${app.url}/api/v1/orgs/${slug}/entries/${entryId}/photos`, { method: 'POST', headers: { cookie: who[role].cookie, origin: app.url }, body: form });
	return { status: res.status, body: (await res.json()) as any };
}

async function get(role: keyof typeof who, path: string, headers: Record<string, string> = {}) {
	const res = await fetch(`${app.url}${path}`, { headers: { cookie: who[role].cookie, ...headers } });
	return { status: res.status, headers: res.headers, bytes: new Uint8Array(await res.arrayBuffer()) };
}

describe('photo content checks', () => {
	it('accepts a PNG named .txt and declared as text, stores it as a PNG, and serves the same bytes', async () => {
		const id = await entry('contributor');
		const up = await upload('contributor', id, PNG, 'readings.txt', 'text/plain');
		expect(up.status).toBe(201);
		expect(up.body.photo).toMatchObject({ fileName: 'readings.png', contentType: 'image/png', width: 64, height: 48, bytes: PNG.length });
		expect(up.body.photo.markdown).toBe(`![readings](/api/v1/orgs/${SLUG}/photos/${up.body.photo.id})`);
		const served = await get('contributor', up.body.photo.url);
		expect(served.status).toBe(200);
		expect(served.headers.get('content-type')).toBe('image/png');
		expect(served.headers.get('x-content-type-options')).toBe('nosniff');
		expect(served.headers.get('cache-control')).toMatch(/private/);
		expect(Buffer.from(served.bytes).equals(PNG)).toBe(true);
		// A revisit with the ETag costs nothing.
		const again = await get('contributor', up.body.photo.url, { 'if-none-match': served.headers.get('etag')! });
		expect(again.status).toBe(304);
	});

	it('accepts JPEG and WebP by content, and a raw image body from a script', async () => {
		const id = await entry('contributor');
		expect((await upload('contributor', id, JPEG, 'c12.jpeg')).body.photo).toMatchObject({ contentType: 'image/jpeg', fileName: 'c12.jpg' });
		expect((await upload('contributor', id, WEBP, 'c12')).body.photo).toMatchObject({ contentType: 'image/webp', fileName: 'c12.webp' });
		const res = await fetch(`${app.url}${base}/entries/${id}/photos?name=top.png`, { method: 'POST', headers: { cookie: who.contributor.cookie, 'content-type': 'image/png' }, body: PNG });
		expect(res.status).toBe(201);
		const list = await call(app, who.contributor, 'GET', `${base}/entries/${id}/photos`);
		expect((list.json() as any).photos.map((p: any) => p.contentType)).toEqual(['image/jpeg', 'image/webp', 'image/png']);
	});

	it.each([
		['a text file named .png', new TextEncoder().encode('U12 pin 7 reads open\n'), 'board.png', 415, 'not_image'],
		['an SVG named .png', new TextEncoder().encode('<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>'), 'x.png', 415, 'not_image'],
		['a truncated PNG', PNG.subarray(0, PNG.length - 20), 'cut.png', 422, 'truncated'],
		['a truncated JPEG', JPEG.subarray(0, 600), 'cut.jpg', 422, 'truncated'],
		['a GIF', new TextEncoder().encode('GIF89a\x01\x00\x01\x00\x00\x00\x00;'), 'a.gif', 415, 'unsupported_type'],
		['an empty file', new Uint8Array(0), 'empty.png', 400, 'empty']
	])('refuses %s with a clear message and stores nothing', async (_, bytes, name, status, reason) => {
		const id = await entry('contributor');
		const up = await upload('contributor', id, bytes, name, 'image/png');
		expect(up.status).toBe(status);
		expect(up.body.error).toMatchObject({ reason });
		expect(up.body.error.message.length).toBeGreaterThan(20);
		expect(up.body.error.issues[0].path).toBe('photo');
		const n = await db.selectFrom('attachment').select((eb) => eb.fn.countAll<string>().as('n')).where('entryId', '=', id).executeTakeFirstOrThrow();
		expect(Number(n.n)).toBe(0);
	});

	it('refuses a photo over 8 MB while it streams in (413) and stores nothing', async () => {
		const id = await entry('contributor');
		const big = new Uint8Array(MAX_PHOTO_BYTES + 1024);
		big.set(PNG);
		const up = await upload('contributor', id, big, 'huge.png');
		expect(up.status).toBe(413);
		expect(up.body.error.code).toBe('too_large');
		const raw = await fetch(`${app.url}${base}/entries/${id}/photos`, { method: 'POST', headers: { cookie: who.contributor.cookie, 'content-type': 'image/png' }, body: big });
		expect(raw.status).toBe(413);
		const n = await db.selectFrom('attachment').select((eb) => eb.fn.countAll<string>().as('n')).where('entryId', '=', id).executeTakeFirstOrThrow();
		expect(Number(n.n)).toBe(0);
	});
});

describe('who sees and changes photos', () => {
	it("shows a draft's photo only to those who may read the draft; viewers see it once published", async () => {
		const id = await entry('contributor');
		const { photo } = (await upload('contributor', id, PNG, 'p.png')).body;
		expect((await get('viewer', photo.url)).status).toBe(404);
		expect((await get('author', photo.url)).status).toBe(200);
		await transitionEntry(db, as('author'), id, 'publish', '');
		expect((await get('viewer', photo.url)).status).toBe(200);
	});

	it("is 404 for another organisation's admin, by the photo's own URL and through their own organisation", async () => {
		const id = await entry('author', true);
		const { photo } = (await upload('author', id, PNG, 'p.png')).body;
		expect((await get('outsider', photo.url)).status).toBe(404);
		expect((await get('outsider', `/api/v1/orgs/${OTHER}/photos/${photo.id}`)).status).toBe(404);
		expect((await call(app, who.outsider, 'DELETE', `/api/v1/orgs/${OTHER}/photos/${photo.id}`)).status).toBe(404);
		expect((await upload('outsider', id, PNG, 'p.png', 'image/png', OTHER)).status).toBe(404);
		expect((await get('author', photo.url)).status).toBe(200);
	});

	it('lets a contributor change photos of their own draft only, and an author any entry', async () => {
		const published = await entry('author', true);
		expect((await upload('contributor', published, PNG, 'p.png')).status).toBe(403);
		const { photo } = (await upload('author', published, PNG, 'p.png')).body;
		expect((await call(app, who.contributor, 'DELETE', `${base}/photos/${photo.id}`)).status).toBe(403);
		expect((await call(app, who.viewer, 'DELETE', `${base}/photos/${photo.id}`)).status).toBe(403);
		expect((await call(app, who.author, 'DELETE', `${base}/photos/${photo.id}`)).status).toBe(204);
		expect((await get('author', photo.url)).status).toBe(404);
	});
});

describe('the no-script photo page', () => {
	it('uploads through the form and lists the photo with the Markdown to paste', async () => {
		const id = await entry('contributor');
		const form = new FormData();
		form.set('photo', new File([PNG], 'bench.png', { type: 'image/png' }));
		const res = await fetch(`${app.url}/o/${SLUG}/entries/${id}/photos?/upload`, {
			method: 'POST',
			headers: { cookie: who.contributor.cookie, origin: app.url, accept: 'text/html' },
			body: form
		});
		expect(res.status).toBe(200);
		const html = await res.text();
		expect(html).toContain('Photo added');
		expect(html).toMatch(/!\[bench\]\(\/api\/v1\/orgs\/photo-bench\/photos\/[0-9a-f-]{36}\)/);
		const bad = new FormData();
		bad.set('photo', new File(['not a photo'], 'x.png', { type: 'image/png' }));
		const refused = await fetch(`${app.url}/o/${SLUG}/entries/${id}/photos?/upload`, {
			method: 'POST',
			headers: { cookie: who.contributor.cookie, origin: app.url, accept: 'text/html' },
			body: bad
		});
		expect(refused.status).toBe(415);
		expect(await refused.text()).toContain('This file is not a photo');
	});
});
