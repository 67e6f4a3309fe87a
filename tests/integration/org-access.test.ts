import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startMailStandin, type MailStandin } from '../../scripts/lib/mail-standin';
import { startStandin, type Standin } from '../../search/standin/server';
import { createApiToken } from '../../src/lib/server/auth/api-tokens';
import { can, ROLES, type Role } from '../../src/lib/server/auth/permissions';
import { createInvitation } from '../../src/lib/server/orgs/invitations';
import { createOrganisation } from '../../src/lib/server/orgs/members';
import { insertMembership } from '../../src/lib/server/orgs/queries';
import { ORG_ROUTES, type OrgRoute, type RouteFixture } from './org-routes';
import { entryCreate } from '../../src/lib/schemas/entries';
import { createEntry, transitionEntry } from '../../src/lib/server/entries/service';
import { insertTrace, processSimulation } from '../../src/lib/server/traces/service';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';
import { addPhoto } from '../../src/lib/server/attachments/service';
import { checkedUpload } from '../../src/lib/server/attachments/upload';
import { type AppServer, call, type Caller, sessionFor, startAppServer } from './support/app-server';

const db = openTestDb();
let app: AppServer;
let mail: MailStandin;
let search: Standin;

const A = 'bench-alpha';
const B = 'bench-bravo';
let orgA: string;
const members = {} as Record<Role, Caller & { userId: string }>;
let outsider: Caller & { userId: string };
let counter = 0;

async function tokenFor(userId: string, orgId: string, role: Role): Promise<string> {
	const r = await db.transaction().execute((trx) => createApiToken(trx, { userId, orgId, name: `t${++counter}`, role }));
	if (!r.ok) throw new Error(r.message);
	return r.token;
}

/** Fresh rows a writing route may consume: a member to change or remove and an open invitation. */
async function freshFixture(): Promise<RouteFixture> {
	const n = ++counter;
	const victim = await sessionFor(db, `victim${n}@example.com`);
	await insertMembership(db, { orgId: orgA, userId: victim.userId, role: 'viewer' });
	const inv = await db.transaction().execute((trx) =>
		createInvitation(trx, { orgId: orgA, email: `pending${n}@example.com`, role: 'viewer', invitedBy: members.admin.userId })
	);
	if (!inv.ok) throw new Error(inv.message);
	const token = await db.transaction().execute((trx) => createApiToken(trx, { userId: victim.userId, orgId: orgA, name: `bench ${n}`, role: 'viewer' }));
	if (!token.ok) throw new Error(token.message);
	const admin = { userId: members.admin.userId, orgId: orgA, orgSlug: A, orgName: A, role: 'admin' as const, via: 'session' as const };
	const entry = await createEntry(db, admin, entryCreate.parse({ title: `Fixture ${n}`, componentKind: 'resistor', symptom: 'Fixture' }));
	await transitionEntry(db, admin, entry.id, 'publish', '');
	const traceId = await insertTrace(db, orgA, {
		entryId: entry.id,
		role: 'fault',
		label: '',
		createdBy: admin.userId,
		processed: processSimulation({ kind: 'resistor', ohms: 2200 }, { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 })
	});
	const photo = checkedUpload('board.png', new Uint8Array(readFileSync('tests/fixtures/photos/board-64x48.png')));
	if (!photo.ok) throw new Error(photo.message);
	const added = await addPhoto(db, admin, entry.id, photo);
	if (added.kind !== 'saved') throw new Error(added.kind);
	const photoId = added.photo.id;
	const contributor = { ...admin, userId: members.contributor.userId, role: 'contributor' as const };
	const draft = await createEntry(db, contributor, entryCreate.parse({ title: `Draft ${n}`, componentKind: 'diode', symptom: 'Fixture draft' }));
	const submitted = await createEntry(db, contributor, entryCreate.parse({ title: `Submitted ${n}`, componentKind: 'diode', symptom: 'Fixture submission' }));
	await transitionEntry(db, contributor, submitted.id, 'submit', '');
	return {
		victimUserId: victim.userId,
		invitationId: inv.id,
		freshEmail: `fresh${n}@example.com`,
		tokenId: token.id,
		entryId: entry.id,
		traceId,
		draftEntryId: draft.id,
		reviewEntryId: submitted.id,
		photoId
	};
}

let shared: RouteFixture | undefined;
/** Writing routes get fresh rows; reading ones share a set, to keep the run short. */
async function fixtureFor(route: OrgRoute): Promise<RouteFixture> {
	if (route.writes) return freshFixture();
	return (shared ??= await freshFixture());
}

beforeAll(async () => {
	await truncateAll(db);
	mail = await startMailStandin();
	search = await startStandin({ masterKey: 'route-test-search-key' });
	app = await startAppServer({
		DATABASE_URL: testDatabaseUrl(),
		AUTH_SECRET: 'route-test-secret-that-is-long-enough-0123456789',
		SMTP_URL: `smtp://127.0.0.1:${mail.smtpPort}`,
		MEILISEARCH_URL: search.url,
		MEILISEARCH_KEY: 'route-test-search-key'
	});
	for (const role of ROLES) members[role] = await sessionFor(db, `${role}@alpha.example.com`, `Alpha ${role}`);
	outsider = await sessionFor(db, 'admin@bravo.example.com', 'Bravo admin');
	const a = await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Bench Alpha', slug: A, creatorId: members.admin.userId }));
	await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Bench Bravo', slug: B, creatorId: outsider.userId }));
	orgA = a!.id;
	for (const role of ['viewer', 'contributor', 'author'] as const) {
		await insertMembership(db, { orgId: orgA, userId: members[role].userId, role });
	}
	// Warm up: the dev server compiles each route on first use.
	for (const r of ORG_ROUTES.filter((r) => r.method === 'GET')) await call(app, members.admin, 'GET', r.request(A, await fixtureFor(r)).path);
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await mail?.close();
	await search?.close();
	await db.destroy();
});

const label = (r: OrgRoute) => `${r.method} ${r.route}${r.name ? ` ?/${r.name}` : ''}`;
/** The status an allowed caller gets: pages and actions render (200), endpoints answer 200/201. */
const allowedStatus = (r: OrgRoute) => r.status ?? (r.kind === 'endpoint' && r.method === 'POST' ? 201 : 200);

describe('the route table', () => {
	// Walks the route folders themselves, so a new page, endpoint or form action cannot be left out.
	function routeFolders(root: string): string[] {
		const out: string[] = [];
		const walk = (dir: string) => {
			const files = readdirSync(dir);
			if (files.some((f) => /^\+(page|server)\b/.test(f))) out.push(relative('src/routes', dir));
			for (const f of files) if (statSync(join(dir, f)).isDirectory()) walk(join(dir, f));
		};
		walk(root);
		return out;
	}

	it('lists every organisation-scoped page and endpoint', () => {
		const folders = [...routeFolders('src/routes/o/[org=slug]'), ...routeFolders('src/routes/api/v1/orgs/[org=slug]')];
		expect(folders.length).toBeGreaterThan(5);
		const listed = new Set(ORG_ROUTES.map((r) => r.route));
		for (const f of folders) expect(listed, `${f} is missing from tests/integration/org-routes.ts`).toContain(f);
	});

	it('lists every form action and every endpoint method', () => {
		for (const folder of new Set(ORG_ROUTES.map((r) => r.route))) {
			const dir = join('src/routes', folder);
			const files = readdirSync(dir);
			if (files.includes('+page.server.ts')) {
				const source = readFileSync(join(dir, '+page.server.ts'), 'utf8');
				const block = source.split('export const actions')[1] ?? '';
				const names = [...block.matchAll(/^\t(\w+): async/gm)].map((m) => m[1]);
				for (const name of names) {
					expect(ORG_ROUTES.some((r) => r.route === folder && r.kind === 'action' && r.name === name), `${folder} ?/${name}`).toBe(true);
				}
			}
			if (files.includes('+server.ts')) {
				const source = readFileSync(join(dir, '+server.ts'), 'utf8');
				for (const m of source.matchAll(/export const (GET|POST|PUT|PATCH|DELETE)\b/g)) {
					expect(ORG_ROUTES.some((r) => r.route === folder && r.kind === 'endpoint' && r.method === m[1]), `${m[1]} ${folder}`).toBe(true);
				}
			}
		}
	});
});

describe('role × action on the real routes', () => {
	for (const route of ORG_ROUTES) {
		for (const role of ROLES) {
			const allowed = can(role, route.action);
			// Concurrent: each call has its own rows, and the server takes requests in parallel anyway.
			it.concurrent(`${label(route)} ${allowed ? 'lets' : 'refuses (403)'} ${role}`, async ({ expect }) => {
				const { path, body } = route.request(A, await fixtureFor(route));
				const res = await call(app, members[role], route.method, path, body);
				expect(res.status, res.text.slice(0, 300)).toBe(allowed ? allowedStatus(route) : 403);
				if (route.kind === 'endpoint' && !allowed) expect(res.json()).toMatchObject({ error: { code: 'forbidden' } });
			});
		}
	}

	it('applies the same matrix to an API token, capped at its own role', async () => {
		// An admin's viewer token is a viewer: it reads, it cannot invite.
		const token = await tokenFor(members.admin.userId, orgA, 'viewer');
		for (const route of ORG_ROUTES.filter((r) => r.kind === 'endpoint')) {
			const { path, body } = route.request(A, await fixtureFor(route));
			const res = await call(app, { bearer: token }, route.method, path, body);
			expect(res.status, label(route)).toBe(can('viewer', route.action) ? allowedStatus(route) : 403);
		}
	});
});

describe('cross-tenant access', () => {
	for (const route of ORG_ROUTES) {
		it.concurrent(`${label(route)} is 404 for an admin of another organisation`, async ({ expect }) => {
			const { path, body } = route.request(A, await fixtureFor(route));
			const res = await call(app, outsider, route.method, path, body);
			expect(res.status).toBe(404);
			if (route.kind === 'endpoint') expect(res.json()).toMatchObject({ error: { code: 'not_found' } });
		});

		it.concurrent(`${label(route)} answers an unknown organisation exactly like a foreign one`, async ({ expect }) => {
			const { path, body } = route.request('no-such-bench', await fixtureFor(route));
			const res = await call(app, members.admin, route.method, path, body);
			expect(res.status).toBe(404);
		});
	}

	it("refuses another organisation's admin token on every org-A endpoint (404)", async () => {
		const orgB = (await db.selectFrom('organisation').select('id').where('slug', '=', B).executeTakeFirstOrThrow()).id;
		const token = await tokenFor(outsider.userId, orgB, 'admin');
		for (const route of ORG_ROUTES.filter((r) => r.kind === 'endpoint')) {
			const { path, body } = route.request(A, await fixtureFor(route));
			expect((await call(app, { bearer: token }, route.method, path, body)).status, label(route)).toBe(404);
		}
	});

	it('writes nothing in organisation A when the outsider posts to it', async () => {
		const fx = await freshFixture();
		const before = await db.selectFrom('membership').select(['userId', 'role']).where('orgId', '=', orgA).orderBy('userId').execute();
		await call(app, outsider, 'POST', `/o/${A}/members?/remove`, { userId: fx.victimUserId });
		await call(app, outsider, 'POST', `/o/${A}/members?/changeRole`, { userId: members.viewer.userId, role: 'admin' });
		const after = await db.selectFrom('membership').select(['userId', 'role']).where('orgId', '=', orgA).orderBy('userId').execute();
		expect(after).toEqual(before);
	});
});

describe('signed out', () => {
	it('sends pages to the sign-in page and answers endpoints 401', async () => {
		for (const route of ORG_ROUTES) {
			const { path, body } = route.request(A, await fixtureFor(route));
			const res = await call(app, {}, route.method, path, body);
			if (route.kind === 'endpoint') {
				expect(res.status, label(route)).toBe(401);
				expect(res.json()).toMatchObject({ error: { code: 'unauthenticated' } });
			} else {
				expect(res.status, label(route)).toBe(303);
				expect(res.location).toMatch(/^\/login\?redirectTo=/);
			}
		}
	});
});

describe('API tokens on the real endpoints', () => {
	it('/api/v1/me names the caller and their organisations, by cookie or by token', async () => {
		const byCookie = await call(app, members.author, 'GET', '/api/v1/me');
		expect(byCookie.status).toBe(200);
		expect(byCookie.json()).toMatchObject({
			user: { email: 'author@alpha.example.com' },
			authenticatedBy: 'session',
			organisations: [{ slug: A, role: 'author' }]
		});
		const token = await tokenFor(members.author.userId, orgA, 'contributor');
		const byToken = await call(app, { bearer: token }, 'GET', '/api/v1/me');
		expect(byToken.json()).toMatchObject({ authenticatedBy: 'token', organisations: [{ slug: A, role: 'contributor' }] });
	});

	it('stops working the moment it is revoked, and records when it was used', async () => {
		const token = await tokenFor(members.admin.userId, orgA, 'admin');
		expect((await call(app, { bearer: token }, 'GET', `/api/v1/orgs/${A}/members`)).status).toBe(200);
		const row = await db.selectFrom('apiToken').select(['id', 'lastUsedAt']).where('userId', '=', members.admin.userId).orderBy('createdAt', 'desc').executeTakeFirstOrThrow();
		expect(row.lastUsedAt).toBeInstanceOf(Date);
		await db.updateTable('apiToken').set({ revokedAt: new Date() }).where('id', '=', row.id).execute();
		const res = await call(app, { bearer: token }, 'GET', `/api/v1/orgs/${A}/members`);
		expect(res.status).toBe(401);
		expect(res.json()).toMatchObject({ error: { code: 'invalid_token' } });
	});

	it('refuses a tampered or malformed token with 401 invalid_token, never falling back to the cookie', async () => {
		const token = await tokenFor(members.admin.userId, orgA, 'admin');
		const tampered = token.slice(0, -1) + (token.endsWith('A') ? 'B' : 'A');
		for (const bearer of [tampered, 'not-a-token', token + 'x']) {
			const res = await call(app, { ...members.admin, bearer }, 'GET', '/api/v1/me');
			expect(res.status).toBe(401);
			expect(res.json()).toMatchObject({ error: { code: 'invalid_token' } });
		}
	});

	it('loses its power when its owner is demoted: the token acts with the lower of the two roles', async () => {
		const m = await sessionFor(db, `demoted${++counter}@example.com`);
		await insertMembership(db, { orgId: orgA, userId: m.userId, role: 'admin' });
		const token = await tokenFor(m.userId, orgA, 'admin');
		expect((await call(app, { bearer: token }, 'GET', `/api/v1/orgs/${A}/members`)).status).toBe(200);
		await db.updateTable('membership').set({ role: 'viewer' }).where('orgId', '=', orgA).where('userId', '=', m.userId).execute();
		expect((await call(app, { bearer: token }, 'GET', `/api/v1/orgs/${A}/members`)).status).toBe(403);
		await db.deleteFrom('membership').where('orgId', '=', orgA).where('userId', '=', m.userId).execute();
		expect((await call(app, { bearer: token }, 'GET', `/api/v1/orgs/${A}`)).status).toBe(404);
	});
});

describe('bad input on the real routes', () => {
	const countRows = async () => ({
		invitations: Number((await db.selectFrom('invitation').select((eb) => eb.fn.countAll<string>().as('n')).executeTakeFirstOrThrow()).n),
		audit: Number((await db.selectFrom('auditLog').select((eb) => eb.fn.countAll<string>().as('n')).executeTakeFirstOrThrow()).n),
		orgs: Number((await db.selectFrom('organisation').select((eb) => eb.fn.countAll<string>().as('n')).executeTakeFirstOrThrow()).n)
	});

	it('answers invalid invitations on the API with stable codes and writes nothing', async () => {
		const token = await tokenFor(members.admin.userId, orgA, 'admin');
		const before = await countRows();
		const cases: [unknown, number, string, string?][] = [
			[{ email: 'not-an-address', role: 'viewer' }, 400, 'invalid_input', 'email'],
			[{ email: 'someone@example.com', role: 'owner' }, 400, 'invalid_input', 'role'],
			[{ email: `${'x'.repeat(300)}@example.com`, role: 'viewer' }, 400, 'invalid_input', 'email'],
			[{ email: 'viewer@alpha.example.com', role: 'viewer' }, 409, 'conflict', 'email']
		];
		for (const [json, status, code, path] of cases) {
			const res = await call(app, { bearer: token }, 'POST', `/api/v1/orgs/${A}/invitations`, { json });
			expect(res.status, JSON.stringify(json).slice(0, 60)).toBe(status);
			const body = res.json() as { error: { code: string; issues?: { path: string }[] } };
			expect(body.error.code).toBe(code);
			expect(body.error.issues?.map((i) => i.path)).toContain(path);
		}
		const notJson = await fetch(`${app.url}/api/v1/orgs/${A}/invitations`, {
			method: 'POST',
			headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' },
			body: '{"email":'
		});
		expect(notJson.status).toBe(400);
		expect(await countRows()).toEqual(before);
	});

	it('refuses a duplicate invitation with a message beside the e-mail field', async () => {
		const fx = await freshFixture();
		const pending = await db.selectFrom('invitation').select('email').where('id', '=', fx.invitationId).executeTakeFirstOrThrow();
		const before = await countRows();
		const res = await call(app, members.admin, 'POST', `/o/${A}/invitations?/invite`, { email: pending.email, role: 'author' });
		expect(res.status).toBe(409);
		expect(res.text).toContain('already has a pending invitation');
		expect(res.text).toMatch(/id="invite-email-error"/);
		expect(await countRows()).toEqual(before);
	});

	it.each([
		['Bench Alpha again', A, 409, 'That address is taken'],
		['Bench', 'Bad Slug!', 400, 'lowercase letters'],
		['Bench', 'login', 400, 'reserved'],
		['x'.repeat(200), 'fine-slug', 400, '120 characters']
	])('refuses organisation %j at /%s with a message beside the field', async (name, slug, status, message) => {
		const before = await countRows();
		const res = await call(app, members.viewer, 'POST', '/orgs/new', { name, slug });
		expect(res.status).toBe(status);
		expect(res.text).toContain(message);
		expect(await countRows()).toEqual(before);
	});

	it('creates an organisation with its creator as admin, then opens it', async () => {
		const res = await call(app, members.viewer, 'POST', '/orgs/new', { name: 'Viewer Workshop', slug: 'viewer-workshop' });
		expect(res.status).toBe(303);
		expect(res.location).toBe('/o/viewer-workshop');
		const page = await call(app, members.viewer, 'GET', '/o/viewer-workshop/members');
		expect(page.status).toBe(200);
	});

	it('keeps the last admin: demoting or removing them is refused with a clear message', async () => {
		const demote = await call(app, outsider, 'POST', `/o/${B}/members?/changeRole`, { userId: outsider.userId, role: 'viewer' });
		expect(demote.status).toBe(409);
		expect(demote.text).toContain('at least one admin');
		const remove = await call(app, outsider, 'POST', `/o/${B}/members?/remove`, { userId: outsider.userId });
		expect(remove.status).toBe(409);
		const role = await db.selectFrom('membership').innerJoin('organisation', 'organisation.id', 'membership.orgId').select('role').where('slug', '=', B).executeTakeFirstOrThrow();
		expect(role.role).toBe('admin');
	});

	it('refuses an unknown role on the members form', async () => {
		const fx = await freshFixture();
		const res = await call(app, members.admin, 'POST', `/o/${A}/members?/changeRole`, { userId: fx.victimUserId, role: 'owner' });
		expect(res.status).toBe(400);
		expect(res.text).toContain('Choose one of the roles listed');
	});
});

describe('invitation mail', () => {
	it('goes through SMTP with a single-use link that the invitee can open', async () => {
		const email = `mailed${++counter}@example.com`;
		const res = await call(app, members.admin, 'POST', `/o/${A}/invitations?/invite`, { email, role: 'author' });
		expect(res.status).toBe(200);
		expect(res.text).toContain(`Invitation sent to ${email}`);
		const message = mail.messages().find((m) => m.to.includes(email));
		expect(message?.subject).toContain('Bench Alpha');
		const link = message?.links.find((l) => l.includes('/invite/'));
		expect(link).toBeDefined();
		const invitee = await sessionFor(db, email);
		const path = new URL(link!).pathname;
		const view = await call(app, invitee, 'GET', path);
		expect(view.text).toContain('data-state="ready"');
		const accepted = await call(app, invitee, 'POST', path, {});
		expect(accepted.status).toBe(303);
		expect(accepted.location).toBe(`/o/${A}`);
		const again = await call(app, invitee, 'POST', path, {});
		expect(again.text).toContain('already been used');
		const role = await db.selectFrom('membership').select('role').where('orgId', '=', orgA).where('userId', '=', invitee.userId).executeTakeFirstOrThrow();
		expect(role.role).toBe('author');
	});

	it('shows a clear page for a tampered link and for someone else signed in', async () => {
		const bogus = await call(app, members.viewer, 'GET', `/invite/cli_${'A'.repeat(43)}`);
		expect(bogus.status).toBe(200);
		expect(bogus.text).toContain('This invitation link is not valid');
		const inv = await db.transaction().execute((trx) =>
			createInvitation(trx, { orgId: orgA, email: `someone${++counter}@example.com`, role: 'viewer', invitedBy: members.admin.userId })
		);
		if (!inv.ok) throw new Error(inv.message);
		const wrong = await call(app, outsider, 'GET', `/invite/${inv.token}`);
		expect(wrong.text).toContain('for a different e-mail address');
		const post = await call(app, outsider, 'POST', `/invite/${inv.token}`, {});
		expect(post.status).toBe(409);
		const joined = await db.selectFrom('membership').select('role').where('orgId', '=', orgA).where('userId', '=', outsider.userId).executeTakeFirst();
		expect(joined).toBeUndefined();
	});
});
