import type { Kysely } from 'kysely';
import type { EntryTransition } from '../../schemas/entries';
import type { MemberContext } from '../auth/member';
import { can } from '../auth/permissions';
import { findUserById } from '../auth/users';
import type { Database } from '../db/connect';
import { sendMail, type Mail } from '../mail/send';
import { listMembers } from '../orgs/queries';
import { type Entry, findEntry } from './queries';
import { publishedMail, returnedMail, submittedMail } from './review-mail';
import { readerFor } from './rules';
import { transitionEntry, type TransitionResult } from './service';

export type StatusChangeResult = TransitionResult & {
	/** Notice mails sent and failed; only for a change that was made. */
	mail?: { sent: number; failed: number };
};

/**
 * A status change and the mail it owes people, in that order: the change commits first (mail is
 * a notice about it, not part of it), then
 * - submit: every author and admin of the organisation but the submitter hears it waits for review;
 * - return: the writer hears why it came back;
 * - publish from review: the writer hears it is published.
 * A failed send never undoes the change; the counts say what happened. `origin` builds the links.
 * Every caller of a status change (form actions, the JSON API) goes through here.
 */
export async function changeEntryStatus(
	db: Kysely<Database>,
	member: MemberContext,
	id: string,
	transition: EntryTransition,
	comment: string,
	origin: string
): Promise<StatusChangeResult> {
	// Publishing one's own draft directly tells nobody; publishing a submission tells its writer.
	const before = transition === 'publish' ? (await findEntry(db, member.orgId, id, readerFor(member)))?.status : undefined;
	const result = await transitionEntry(db, member, id, transition, comment);
	if (result.kind !== 'done') return result;
	const mails = await noticesFor(db, member, result.entry, transition, origin, before === 'in_review');
	const outcomes = await Promise.all(mails.map(({ to, mail }) => sendMail(to, mail)));
	const sent = outcomes.filter(Boolean).length;
	return { ...result, mail: { sent, failed: outcomes.length - sent } };
}

async function noticesFor(
	db: Kysely<Database>,
	member: MemberContext,
	entry: Entry,
	transition: EntryTransition,
	origin: string,
	fromReview: boolean
): Promise<{ to: string; mail: Mail }[]> {
	const about = { origin, orgSlug: member.orgSlug, orgName: member.orgName, entryId: entry.id, title: entry.title };
	const actor = await findUserById(db, member.userId);
	const actorName = actor?.name ?? actor?.email ?? 'Someone';
	if (transition === 'submit') {
		const reviewers = (await listMembers(db, member.orgId)).filter((m) => can(m.role, 'entry:review') && m.userId !== member.userId && m.email);
		const mail = submittedMail({ ...about, writer: actorName, symptom: entry.symptom });
		return reviewers.map((r) => ({ to: r.email, mail }));
	}
	const writerTold = transition === 'return' || (transition === 'publish' && fromReview);
	if (!writerTold || !entry.authorId || entry.authorId === member.userId) return [];
	const writer = await findUserById(db, entry.authorId);
	if (!writer) return [];
	const mail =
		transition === 'return'
			? returnedMail({ ...about, reviewer: actorName, comment: entry.reviewComment ?? '' })
			: publishedMail({ ...about, reviewer: actorName });
	return [{ to: writer.email, mail }];
}
