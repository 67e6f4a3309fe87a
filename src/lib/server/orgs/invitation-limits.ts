import { sql, type Transaction } from 'kysely';
import type { Database } from '../db/connect';
import type { Role } from '../auth/permissions';
import { createInvitation, type InviteResult, resendInvitation } from './invitations';

/**
 * How many invitation e-mails may go out. Per invitation: a pause between two mails of it (so a
 * double click or an impatient admin cannot flood the invitee) and a cap on resends per 24 hours;
 * per organisation: a cap on all invitation mails per hour (so one admin account, or a script with
 * its token, cannot turn the organisation into a mail cannon). Counted in Postgres, so every app
 * instance sees the same counts.
 */
export interface InvitationMailLimits {
	/** Least time between two mails of one invitation (the first one included); 0 turns it off. */
	resendIntervalSeconds: number;
	/** Most resends of one invitation inside any 24 hours. */
	resendsPerDay: number;
	/** Most invitation mails (new and resent) of one organisation inside any hour. */
	mailsPerOrgPerHour: number;
}

export const INVITATION_MAIL_LIMITS: Readonly<InvitationMailLimits> = {
	resendIntervalSeconds: 60,
	resendsPerDay: 5,
	mailsPerOrgPerHour: 50
};

const DAY_MS = 24 * 60 * 60_000;
const HOUR_MS = 60 * 60_000;

/** The limits as configured (README: INVITATION_RESEND_INTERVAL_SECONDS and friends). */
export function invitationMailLimits(config: {
	INVITATION_RESEND_INTERVAL_SECONDS: number;
	INVITATION_RESENDS_PER_DAY: number;
	INVITATION_MAILS_PER_ORG_PER_HOUR: number;
}): InvitationMailLimits {
	return {
		resendIntervalSeconds: config.INVITATION_RESEND_INTERVAL_SECONDS,
		resendsPerDay: config.INVITATION_RESENDS_PER_DAY,
		mailsPerOrgPerHour: config.INVITATION_MAILS_PER_ORG_PER_HOUR
	};
}

export type InvitationMailKind = 'invite' | 'resend';

export type InvitationMailDecision =
	| { allowed: true }
	| { allowed: false; scope: 'interval' | 'daily' | 'organisation'; retryAfterSeconds: number; message: string };

/**
 * A wait in words, rounded up so the action really is allowed by then: seconds up to a minute and
 * a half, then minutes up to an hour and a half, then hours. Pure.
 */
export function describeWait(seconds: number): string {
	const s = Math.max(1, Math.ceil(seconds));
	const plural = (n: number, unit: string) => `${n} ${unit}${n === 1 ? '' : 's'}`;
	if (s <= 90) return plural(s, 'second');
	const minutes = Math.ceil(s / 60);
	if (minutes <= 90) return plural(minutes, 'minute');
	return plural(Math.ceil(s / 3600), 'hour');
}

/** The limits in one sentence, for the invitations page. Pure. */
export function describeLimits(limits: InvitationMailLimits): string {
	const interval = limits.resendIntervalSeconds > 0 ? `at most once every ${describeWait(limits.resendIntervalSeconds)} and ` : '';
	return `An invitation can be resent ${interval}${limits.resendsPerDay} time${limits.resendsPerDay === 1 ? '' : 's'} a day; the organisation sends up to ${limits.mailsPerOrgPerHour} invitation e-mails an hour.`;
}

/** The sentence shown on the page and returned by the API for a refused mail. Pure. */
export function limitMessage(scope: 'interval' | 'daily' | 'organisation', kind: InvitationMailKind, retryAfterSeconds: number, limits: InvitationMailLimits): string {
	const wait = describeWait(retryAfterSeconds);
	if (scope === 'interval') return `You can resend this invitation in ${wait}.`;
	if (scope === 'daily') {
		return `This invitation was resent ${limits.resendsPerDay} time${limits.resendsPerDay === 1 ? '' : 's'} in the last 24 hours. You can resend it in ${wait}.`;
	}
	const then = kind === 'resend' ? `You can resend this invitation in ${wait}.` : `You can send more invitations in ${wait}.`;
	return `This organisation has sent ${limits.mailsPerOrgPerHour} invitation e-mails in the last hour. ${then}`;
}

function refusal(
	scope: 'interval' | 'daily' | 'organisation',
	kind: InvitationMailKind,
	freesAt: number,
	now: Date,
	limits: InvitationMailLimits
): InvitationMailDecision {
	const retryAfterSeconds = Math.max(1, Math.ceil((freesAt - now.getTime()) / 1000));
	return { allowed: false, scope, retryAfterSeconds, message: limitMessage(scope, kind, retryAfterSeconds, limits) };
}

/**
 * Whether one more invitation mail may go out now: for `invitationId` when resending, for the
 * organisation always. Takes a transaction-long advisory lock on the organisation first, so the
 * decision and the `recordInvitationMail` that follows in the same transaction cannot be raced by
 * another request on any app instance. Also forgets mails older than every window.
 */
export async function checkInvitationMail(
	trx: Transaction<Database>,
	input: { orgId: string; kind: InvitationMailKind; invitationId?: string; now: Date },
	limits: InvitationMailLimits
): Promise<InvitationMailDecision> {
	const { orgId, kind, now } = input;
	await sql`select pg_advisory_xact_lock(hashtextextended(${`invitation-mail:${orgId}`}, 0))`.execute(trx);
	await trx
		.deleteFrom('invitationMail')
		.where('orgId', '=', orgId)
		.where('sentAt', '<', new Date(now.getTime() - Math.max(DAY_MS, HOUR_MS, limits.resendIntervalSeconds * 1000)))
		.execute();

	if (input.invitationId) {
		const mails = await trx
			.selectFrom('invitationMail')
			.select(['kind', 'sentAt'])
			.where('orgId', '=', orgId)
			.where('invitationId', '=', input.invitationId)
			.where('sentAt', '>', new Date(now.getTime() - DAY_MS))
			.orderBy('sentAt', 'desc')
			.limit(limits.resendsPerDay + 1)
			.execute();
		const last = mails[0]?.sentAt.getTime();
		const intervalMs = limits.resendIntervalSeconds * 1000;
		if (last !== undefined && now.getTime() - last < intervalMs) return refusal('interval', kind, last + intervalMs, now, limits);
		const resends = mails.filter((m) => m.kind === 'resend');
		if (resends.length >= limits.resendsPerDay) {
			// The oldest of the last `resendsPerDay` resends leaving the 24 hours frees the next one.
			return refusal('daily', kind, resends[limits.resendsPerDay - 1].sentAt.getTime() + DAY_MS, now, limits);
		}
	}

	const recent = await trx
		.selectFrom('invitationMail')
		.select('sentAt')
		.where('orgId', '=', orgId)
		.where('sentAt', '>', new Date(now.getTime() - HOUR_MS))
		.orderBy('sentAt', 'desc')
		.limit(limits.mailsPerOrgPerHour)
		.execute();
	if (recent.length >= limits.mailsPerOrgPerHour) {
		return refusal('organisation', kind, recent[recent.length - 1].sentAt.getTime() + HOUR_MS, now, limits);
	}
	return { allowed: true };
}

/** Counts one invitation mail. Call it in the transaction that ran `checkInvitationMail`. */
export async function recordInvitationMail(
	trx: Transaction<Database>,
	input: { orgId: string; invitationId: string; kind: InvitationMailKind; now: Date }
): Promise<void> {
	await trx.insertInto('invitationMail').values({ orgId: input.orgId, invitationId: input.invitationId, kind: input.kind, sentAt: input.now }).execute();
}

export type RateLimited = { ok: false; code: 'rate_limited'; message: string; retryAfterSeconds: number };

const limited = (d: Extract<InvitationMailDecision, { allowed: false }>): RateLimited => ({
	ok: false,
	code: 'rate_limited',
	message: d.message,
	retryAfterSeconds: d.retryAfterSeconds
});

/**
 * `createInvitation` under the organisation's hourly mail limit, counting the mail it is about to
 * send. What the invitation page and the API call; a refusal writes nothing.
 */
export async function inviteWithinLimits(
	trx: Transaction<Database>,
	input: { orgId: string; email: string; role: Role; invitedBy: string; now?: Date },
	limits: InvitationMailLimits
): Promise<InviteResult | RateLimited> {
	const now = input.now ?? new Date();
	const decision = await checkInvitationMail(trx, { orgId: input.orgId, kind: 'invite', now }, limits);
	if (!decision.allowed) return limited(decision);
	const result = await createInvitation(trx, { ...input, now });
	if (result.ok) await recordInvitationMail(trx, { orgId: input.orgId, invitationId: result.id, kind: 'invite', now });
	return result;
}

export type ResendResult =
	| { ok: true; token: string; email: string; role: Role; expiresAt: Date }
	| { ok: false; code: 'not_pending'; message: string }
	| RateLimited;

/**
 * `resendInvitation` under the per-invitation and per-organisation limits. A refusal changes
 * nothing (the current link keeps working); `not_pending` when no such open invitation exists.
 */
export async function resendWithinLimits(
	trx: Transaction<Database>,
	input: { orgId: string; id: string; actorId: string; now?: Date },
	limits: InvitationMailLimits
): Promise<ResendResult> {
	const now = input.now ?? new Date();
	const decision = await checkInvitationMail(trx, { orgId: input.orgId, kind: 'resend', invitationId: input.id, now }, limits);
	if (!decision.allowed) return limited(decision);
	const sent = await resendInvitation(trx, { ...input, now });
	if (!sent) return { ok: false, code: 'not_pending', message: 'That invitation is no longer pending.' };
	await recordInvitationMail(trx, { orgId: input.orgId, invitationId: input.id, kind: 'resend', now });
	return { ok: true, ...sent };
}
