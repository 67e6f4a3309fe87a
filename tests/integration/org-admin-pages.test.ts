import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startMailStandin, type MailStandin } from '../../scripts/lib/mail-standin';
import { createApiToken } from '../../src/lib/server/auth/api-tokens';
import { listAudit } from '../../src/lib/server/orgs/audit';
import { createOrganisation, renameOrganisation } from '../../src/lib/server/orgs/members';
import { insertMembership } from '../../src/lib/server/orgs/queries';
import { type AppServer, call, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * The organisation settings page and the invitation mail limits as people meet them: a browser
 * without script posting the forms, and a script calling the API. The app runs with a small
 * per-organisation limit (INVITATION_MAILS_PER_ORG_PER_HOUR=3), which also shows the setting is read.
 */
const db = openTestDb();
let app: AppServer;
let mail: MailStandin;
const SLUG = 'settings-bench';
const ROLES = ['admin', 'author', 'contributor', 'viewer'] as const;
const who = {} as Record<(typeof ROLES)[number], { cookie: string; userId: string }>;
let outsider: { cookie: string; userId: string };
let orgId: string;
let orgs = 0;

const nameOf = async () => (await db.selectFrom('organisation').select('name').where('id', '=', orgId).executeTakeFirstOrThrow()).name;

/** An organisation of its own for each invitation test, so their hourly counts stay apart. */
async function freshOrg(): Promise<{ slug: string; id: string; token: string }> {
	const slug = `invite-bench-${++orgs}`;
	const org = (await db.transaction().execute((trx) => createOrganisation(trx, { name: `Invite bench ${orgs}`, slug, creatorId: who.admin.userId })))!;
	const token = await db.transaction().execute((trx) => createApiToken(trx, { userId: who.admin.userId, orgId: org.id, name: `script ${orgs}`, role: 'admin' }));
	if (!token.ok) throw new Error(token.message);
	return { slug, id: org.id, token: token.token };
}

beforeAll(async () => {
	await truncateAll(db);
	mail = await startMailStandin();
	app = await startAppServer({
		DATABASE_URL: testDatabaseUrl(),
		AUTH_SECRET: 'org-admin-pages-test-secret-long-enough-0123456789',
		SMTP_URL: `smtp://127.0.0.1:${mail.smtpPort}`,
		INVITATION_MAILS_PER_ORG_PER_HOUR: '3'
	});
	for (const role of ROLES) who[role] = await sessionFor(db, `${role}@settings.example`, `${role} of the bench`);
	outsider = await sessionFor(db, 'admin@elsewhere.example', 'Elsewhere admin');
	const org = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Settings Bench', slug: SLUG, creatorId: who.admin.userId })))!;
	orgId = org.id;
	for (const role of ['author', 'contributor', 'viewer'] as const) await insertMembership(db, { orgId, userId: who[role].userId, role });
	await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Elsewhere', slug: 'elsewhere-bench', creatorId: outsider.userId }));
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await mail?.close();
	await db.destroy();
});

describe('renaming an organisation', () => {
	it('shows the admin the name in its field and the address read-only, with why it stays', async () => {
		const page = await call(app, who.admin, 'GET', `/o/${SLUG}/settings`);
		expect(page.status).toBe(200);
		expect(page.text).toMatch(/<input[^>]*id="org-name"[^>]*value="Settings Bench"/);
		expect(page.text).toContain(`${app.url}/o/${SLUG}</dd>`);
		expect(page.text).toContain('links and bookmarks');
		// The address is not a field of the form: nothing posts a new slug.
		expect(page.text).not.toContain('name="slug"');
		// The admin finds the page in the navigation and on the organisation's home.
		expect(page.text).toContain(`href="/o/${SLUG}/settings"`);
		expect((await call(app, who.admin, 'GET', `/o/${SLUG}`)).text).toContain('Organisation settings');
	});

	it('renames for an admin, shows the new name at once, keeps the address and records it in the audit log', async () => {
		const res = await call(app, who.admin, 'POST', `/o/${SLUG}/settings?/rename`, { name: '  Settings Bench, east wing ', slug: 'hijacked' });
		expect(res.status).toBe(200);
		expect(res.text).toContain('The organisation is now called Settings Bench, east wing.');
		// The same response already renders the new name (title and field), not the one loaded before the action.
		expect(res.text).toContain('<title>Settings — Settings Bench, east wing — Curvelore</title>');
		expect(res.text).toMatch(/<input[^>]*id="org-name"[^>]*value="Settings Bench, east wing"/);
		expect(await nameOf()).toBe('Settings Bench, east wing');
		expect((await db.selectFrom('organisation').select('slug').where('id', '=', orgId).executeTakeFirstOrThrow()).slug).toBe(SLUG);
		const audit = await listAudit(db, orgId);
		expect(audit[0]).toMatchObject({ action: 'org.renamed', actorId: who.admin.userId, details: { from: 'Settings Bench', to: 'Settings Bench, east wing' } });
		expect((await call(app, who.admin, 'GET', `/o/${SLUG}/audit`)).text).toContain('renamed the organisation');
	});

	it('writes nothing when the name is unchanged', async () => {
		const name = await nameOf();
		const rows = (await listAudit(db, orgId)).length;
		const res = await call(app, who.admin, 'POST', `/o/${SLUG}/settings?/rename`, { name });
		expect(res.status).toBe(200);
		expect(res.text).toContain('That is already its name; nothing changed.');
		expect((await listAudit(db, orgId)).length).toBe(rows);
	});

	it.each([
		['', 'Enter a name.'],
		['   ', 'Enter a name.'],
		['x'.repeat(121), 'Keep a name to 120 characters or fewer.']
	])('refuses the name %j beside the field, keeping what was typed', async (name, message) => {
		const before = await nameOf();
		const res = await call(app, who.admin, 'POST', `/o/${SLUG}/settings?/rename`, { name });
		expect(res.status).toBe(400);
		expect(res.text).toMatch(new RegExp(`id="org-name-error"[^>]*>${message}<`));
		expect(res.text).toMatch(/<input[^>]*aria-invalid="true"/);
		if (name.trim()) expect(res.text).toContain(`value="${name}"`);
		expect(await nameOf()).toBe(before);
	});

	it.each(['author', 'contributor', 'viewer'] as const)('refuses a %s with the admin pages’ 403 and changes nothing', async (role) => {
		const before = await nameOf();
		const members = await call(app, who[role], 'GET', `/o/${SLUG}/members`);
		const page = await call(app, who[role], 'GET', `/o/${SLUG}/settings`);
		expect(page.status).toBe(403);
		expect(members.status).toBe(403);
		expect(page.text).toContain('Your role in this organisation does not allow this.');
		const post = await call(app, who[role], 'POST', `/o/${SLUG}/settings?/rename`, { name: `Renamed by ${role}` });
		expect(post.status).toBe(403);
		expect(await nameOf()).toBe(before);
		// Nor do they see the way in.
		expect((await call(app, who[role], 'GET', `/o/${SLUG}`)).text).not.toContain(`/o/${SLUG}/settings`);
	});

	it('answers an admin of another organisation 404 and leaves the name alone', async () => {
		const before = await nameOf();
		expect((await call(app, outsider, 'GET', `/o/${SLUG}/settings`)).status).toBe(404);
		expect((await call(app, outsider, 'POST', `/o/${SLUG}/settings?/rename`, { name: 'Taken over' })).status).toBe(404);
		expect(await nameOf()).toBe(before);
	});

	it('renames only its own organisation (query scoping)', async () => {
		const other = await db.selectFrom('organisation').select(['id', 'name']).where('slug', '=', 'elsewhere-bench').executeTakeFirstOrThrow();
		await db.transaction().execute((trx) => renameOrganisation(trx, { orgId, actorId: who.admin.userId, name: 'Only this one' }));
		expect((await db.selectFrom('organisation').select('name').where('id', '=', other.id).executeTakeFirstOrThrow()).name).toBe(other.name);
		expect(await listAudit(db, other.id)).toHaveLength(1);
		expect(await nameOf()).toBe('Only this one');
	});
});

describe('invitation mail limits on the page and the API', () => {
	it('refuses a resend within the minute beside that invitation, and through the API with 429 and the same words', async () => {
		const org = await freshOrg();
		const invited = await call(app, who.admin, 'POST', `/o/${org.slug}/invitations?/invite`, { email: 'wren@settings.example', role: 'viewer' });
		expect(invited.status).toBe(200);
		// The page states the limits in force (this app runs with 3 mails per organisation an hour).
		expect(invited.text).toContain('the organisation sends up to 3 invitation e-mails an hour.');
		const inv = await db.selectFrom('invitation').select(['id', 'tokenHash']).where('orgId', '=', org.id).executeTakeFirstOrThrow();

		const page = await call(app, who.admin, 'POST', `/o/${org.slug}/invitations?/resend`, { id: inv.id });
		expect(page.status).toBe(429);
		const shown = /data-testid="resend-refused"[^>]*>(You can resend this invitation in (\d+) seconds?\.)</.exec(page.text);
		expect(shown, page.text.slice(0, 400)).not.toBeNull();
		expect(Number(shown![2])).toBeGreaterThan(0);
		expect(Number(shown![2])).toBeLessThanOrEqual(60);

		const api = await fetch(`${app.url}/api/v1/orgs/${org.slug}/invitations/${inv.id}/resend`, {
			method: 'POST',
			headers: { authorization: `Bearer ${org.token}`, 'content-type': 'application/json' },
			body: '{}'
		});
		expect(api.status).toBe(429);
		const body = (await api.json()) as { error: { code: string; message: string } };
		expect(body.error.code).toBe('rate_limited');
		expect(body.error.message).toMatch(/^You can resend this invitation in \d+ seconds?\.$/);
		expect(Number(api.headers.get('retry-after'))).toBeGreaterThan(0);
		expect(Number(api.headers.get('retry-after'))).toBeLessThanOrEqual(60);
		// Refused twice, the link is the one first mailed.
		expect((await db.selectFrom('invitation').select('tokenHash').where('id', '=', inv.id).executeTakeFirstOrThrow()).tokenHash).toBe(inv.tokenHash);
		expect(mail.messages().filter((m) => m.to.includes('wren@settings.example'))).toHaveLength(1);
	});

	it('resends once the minute has passed, through the API too', async () => {
		const org = await freshOrg();
		const created = await call(app, { bearer: org.token }, 'POST', `/api/v1/orgs/${org.slug}/invitations`, { json: { email: 'later@settings.example', role: 'author' } });
		expect(created.status).toBe(201);
		const { id } = (created.json() as { invitation: { id: string } }).invitation;
		// The first mail, moved a minute and a second into the past (the app reads the real clock).
		await db.updateTable('invitationMail').set({ sentAt: new Date(Date.now() - 61_000) }).where('invitationId', '=', id).execute();
		const res = await call(app, { bearer: org.token }, 'POST', `/api/v1/orgs/${org.slug}/invitations/${id}/resend`, { json: {} });
		expect(res.status).toBe(200);
		expect(res.json()).toMatchObject({ invitation: { id, email: 'later@settings.example', role: 'author' }, mailed: true });
		expect(mail.messages().filter((m) => m.to.includes('later@settings.example'))).toHaveLength(2);
	});

	it('stops an organisation at its configured mails per hour, on the page and with 429 through the API', async () => {
		const org = await freshOrg();
		for (let i = 1; i <= 3; i++) {
			const res = await call(app, { bearer: org.token }, 'POST', `/api/v1/orgs/${org.slug}/invitations`, { json: { email: `p${i}@settings.example`, role: 'viewer' } });
			expect(res.status).toBe(201);
		}
		const api = await call(app, { bearer: org.token }, 'POST', `/api/v1/orgs/${org.slug}/invitations`, { json: { email: 'p4@settings.example', role: 'viewer' } });
		expect(api.status).toBe(429);
		const message = (api.json() as { error: { code: string; message: string } }).error;
		expect(message.code).toBe('rate_limited');
		expect(message.message).toMatch(/^This organisation has sent 3 invitation e-mails in the last hour\. You can send more invitations in (59|60) minutes\.$/);

		const page = await call(app, who.admin, 'POST', `/o/${org.slug}/invitations?/invite`, { email: 'p4@settings.example', role: 'viewer' });
		expect(page.status).toBe(429);
		expect(page.text).toMatch(/id="invite-email-error"[^>]*>This organisation has sent 3 invitation e-mails in the last hour\./);
		// What was typed stays in the form.
		expect(page.text).toContain('value="p4@settings.example"');
		expect(await db.selectFrom('invitation').select('id').where('orgId', '=', org.id).execute()).toHaveLength(3);
	});
});
