import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { ensureUser } from '../../src/lib/server/auth/users';
import { findInvitationByToken } from '../../src/lib/server/orgs/invitations';
import {
	describeLimits,
	describeWait,
	INVITATION_MAIL_LIMITS,
	type InvitationMailLimits,
	invitationMailLimits,
	inviteWithinLimits,
	resendWithinLimits
} from '../../src/lib/server/orgs/invitation-limits';
import { createOrganisation } from '../../src/lib/server/orgs/members';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());
beforeEach(() => truncateAll(db));

// Every call names its own instant: the windows pass by moving the clock, never by sleeping.
const t0 = new Date('2026-12-01T10:00:00Z');
const at = (seconds: number) => new Date(t0.getTime() + seconds * 1000);
const MINUTE = 60;
const HOUR = 60 * MINUTE;
const DAY = 24 * HOUR;

async function org(slug: string) {
	const admin = await ensureUser(db, { email: `admin@${slug}.example.com`, name: `Admin ${slug}` });
	const o = (await db.transaction().execute((trx) => createOrganisation(trx, { name: slug, slug, creatorId: admin.id })))!;
	return { orgId: o.id, adminId: admin.id };
}

function invite(o: { orgId: string; adminId: string }, email: string, now: Date, limits: InvitationMailLimits = INVITATION_MAIL_LIMITS) {
	return db.transaction().execute((trx) => inviteWithinLimits(trx, { orgId: o.orgId, email, role: 'viewer', invitedBy: o.adminId, now }, limits));
}

function resend(o: { orgId: string; adminId: string }, id: string, now: Date, limits: InvitationMailLimits = INVITATION_MAIL_LIMITS) {
	return db.transaction().execute((trx) => resendWithinLimits(trx, { orgId: o.orgId, id, actorId: o.adminId, now }, limits));
}

async function invited(o: { orgId: string; adminId: string }, email: string, now: Date, limits?: InvitationMailLimits) {
	const r = await invite(o, email, now, limits);
	if (!r.ok) throw new Error(r.message);
	return r;
}

const mailRows = async () => Number((await db.selectFrom('invitationMail').select((eb) => eb.fn.countAll<string>().as('n')).executeTakeFirstOrThrow()).n);

describe('invitation mail limits (stored in Postgres)', () => {
	it('default to one mail per invitation a minute, 5 resends a day and 50 mails per organisation an hour', () => {
		expect(INVITATION_MAIL_LIMITS).toEqual({ resendIntervalSeconds: 60, resendsPerDay: 5, mailsPerOrgPerHour: 50 });
		expect(invitationMailLimits({ INVITATION_RESEND_INTERVAL_SECONDS: 30, INVITATION_RESENDS_PER_DAY: 2, INVITATION_MAILS_PER_ORG_PER_HOUR: 9 })).toEqual({
			resendIntervalSeconds: 30,
			resendsPerDay: 2,
			mailsPerOrgPerHour: 9
		});
	});

	it('refuses a resend within a minute of the last mail, names the seconds left, and allows it once the minute has passed', async () => {
		const a = await org('alpha');
		const inv = await invited(a, 'wren@example.com', t0);
		// Sent at t0; asked 20 s later, the minute ends 40 s from then.
		expect(await resend(a, inv.id, at(20))).toEqual({
			ok: false,
			code: 'rate_limited',
			retryAfterSeconds: 40,
			message: 'You can resend this invitation in 40 seconds.'
		});
		// A refusal changes nothing: the first link still works.
		expect((await findInvitationByToken(db, inv.token))?.state).toBe('open');
		expect(await resend(a, inv.id, at(59.5))).toMatchObject({ ok: false, retryAfterSeconds: 1, message: 'You can resend this invitation in 1 second.' });
		const sent = await resend(a, inv.id, at(60));
		expect(sent).toMatchObject({ ok: true, email: 'wren@example.com' });
		// The minute now runs from that resend.
		expect(await resend(a, inv.id, at(90))).toMatchObject({ ok: false, retryAfterSeconds: 30 });
	});

	it('allows 5 resends of one invitation in 24 hours, then names the wait until the oldest leaves the day', async () => {
		const a = await org('alpha');
		const inv = await invited(a, 'wren@example.com', t0);
		for (let i = 1; i <= 5; i++) expect(await resend(a, inv.id, at(i * 10 * MINUTE))).toMatchObject({ ok: true });
		// Resends at 10, 20 … 50 minutes; asked at 60 minutes, the one at 10 minutes leaves the day 23 h 10 min later.
		const refused = await resend(a, inv.id, at(60 * MINUTE));
		expect(refused).toEqual({
			ok: false,
			code: 'rate_limited',
			retryAfterSeconds: 23 * HOUR + 10 * MINUTE,
			message: 'This invitation was resent 5 times in the last 24 hours. You can resend it in 24 hours.'
		});
		expect(await resend(a, inv.id, at(10 * MINUTE + DAY - 1))).toMatchObject({ ok: false, code: 'rate_limited' });
		expect(await resend(a, inv.id, at(10 * MINUTE + DAY))).toMatchObject({ ok: true });
		// Another invitation of the same organisation has its own count.
		const other = await invited(a, 'other@example.com', at(60 * MINUTE));
		expect(await resend(a, other.id, at(61 * MINUTE))).toMatchObject({ ok: true });
	});

	it('caps the organisation’s invitation mails per hour, new and resent alike, and frees them as the hour passes', async () => {
		const limits = { ...INVITATION_MAIL_LIMITS, mailsPerOrgPerHour: 3 };
		const a = await org('alpha');
		const first = await invited(a, 'p1@example.com', at(0), limits);
		await invited(a, 'p2@example.com', at(MINUTE), limits);
		expect(await resend(a, first.id, at(2 * MINUTE), limits)).toMatchObject({ ok: true });
		// Three mails at 0, 1 and 2 minutes; at 10 minutes the one at 0 leaves the hour 50 minutes later.
		const before = { invitations: await db.selectFrom('invitation').select('id').execute(), mails: await mailRows() };
		expect(await invite(a, 'p3@example.com', at(10 * MINUTE), limits)).toEqual({
			ok: false,
			code: 'rate_limited',
			retryAfterSeconds: 50 * MINUTE,
			message: 'This organisation has sent 3 invitation e-mails in the last hour. You can send more invitations in 50 minutes.'
		});
		expect(await resend(a, first.id, at(10 * MINUTE), limits)).toMatchObject({
			ok: false,
			message: 'This organisation has sent 3 invitation e-mails in the last hour. You can resend this invitation in 50 minutes.'
		});
		// Refusals write nothing: no invitation, no counted mail.
		expect({ invitations: await db.selectFrom('invitation').select('id').execute(), mails: await mailRows() }).toEqual(before);
		// Another organisation is not held back by this one's count.
		const b = await org('bravo');
		expect(await invite(b, 'p3@example.com', at(10 * MINUTE), limits)).toMatchObject({ ok: true });
		// Once the mail at 0 is an hour old, one more may go.
		expect(await invite(a, 'p3@example.com', at(HOUR), limits)).toMatchObject({ ok: true });
		expect(await invite(a, 'p4@example.com', at(HOUR), limits)).toMatchObject({ ok: false, retryAfterSeconds: MINUTE });
	});

	it('counts nothing for an invitation that is not pending, or for an address that is refused', async () => {
		const a = await org('alpha');
		expect(await resend(a, '00000000-0000-4000-8000-000000000000', t0)).toMatchObject({ ok: false, code: 'not_pending' });
		const inv = await invited(a, 'wren@example.com', t0);
		expect(await invite(a, 'wren@example.com', at(5), INVITATION_MAIL_LIMITS)).toMatchObject({ ok: false, code: 'already_invited' });
		expect(await invite(a, 'admin@alpha.example.com', at(6), INVITATION_MAIL_LIMITS)).toMatchObject({ ok: false, code: 'already_member' });
		expect(await mailRows()).toBe(1);
	});

	it('lets exactly one of ten simultaneous resends of one invitation through', async () => {
		// As from several app instances at once: the organisation's advisory lock serialises them.
		const a = await org('alpha');
		const inv = await invited(a, 'race@example.com', t0);
		const results = await Promise.all(Array.from({ length: 10 }, () => resend(a, inv.id, at(2 * MINUTE))));
		expect(results.filter((r) => r.ok)).toHaveLength(1);
		expect(results.filter((r) => !r.ok && r.code === 'rate_limited')).toHaveLength(9);
	});

	it('forgets the organisation’s mails once they are older than a day', async () => {
		const a = await org('alpha');
		await invited(a, 'old@example.com', t0);
		await invited(a, 'new@example.com', at(DAY + MINUTE));
		expect(await mailRows()).toBe(1);
	});

	it('states the limits on the invitations page in one sentence', () => {
		expect(describeLimits(INVITATION_MAIL_LIMITS)).toBe(
			'An invitation can be resent at most once every 60 seconds and 5 times a day; the organisation sends up to 50 invitation e-mails an hour.'
		);
		expect(describeLimits({ resendIntervalSeconds: 0, resendsPerDay: 1, mailsPerOrgPerHour: 3 })).toBe(
			'An invitation can be resent 1 time a day; the organisation sends up to 3 invitation e-mails an hour.'
		);
	});

	it('words a wait in seconds, then minutes, then hours, always rounding up', () => {
		expect([0.2, 1, 40, 90].map(describeWait)).toEqual(['1 second', '1 second', '40 seconds', '90 seconds']);
		expect([91, 3000, 90 * 60].map(describeWait)).toEqual(['2 minutes', '50 minutes', '90 minutes']);
		expect([90 * 60 + 1, 23 * 3600 + 600].map(describeWait)).toEqual(['2 hours', '24 hours']);
	});
});
