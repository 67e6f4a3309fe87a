import { type Kysely, type Transaction, sql } from 'kysely';
import type { EntryStatus, EntryTransition } from '../../schemas/entries';
import type { Database } from '../db/connect';

type Db = Kysely<Database> | Transaction<Database>;

/** One status change of an entry, as the review history shows it. */
export interface ReviewEvent {
	id: string;
	transition: EntryTransition;
	fromStatus: EntryStatus;
	toStatus: EntryStatus;
	actorId: string | null;
	/** The person's name (or e-mail address); null once their account is gone. */
	actorName: string | null;
	/** What the person wrote with the change; always present on a send-back. */
	comment: string | null;
	at: Date;
}

export interface NewReviewEvent {
	entryId: string;
	actorId: string;
	transition: EntryTransition;
	fromStatus: EntryStatus;
	toStatus: EntryStatus;
	comment: string | null;
	at: Date;
}

/** Records a status change; call it inside the transaction that makes the change, with the entry locked. */
export async function insertReviewEvent(trx: Transaction<Database>, orgId: string, event: NewReviewEvent): Promise<void> {
	const comment = event.comment?.trim() ? event.comment.trim() : null;
	await trx
		.insertInto('entryReviewEvent')
		.values({
			orgId,
			entryId: event.entryId,
			actorId: event.actorId,
			transition: event.transition,
			fromStatus: event.fromStatus,
			toStatus: event.toStatus,
			comment,
			createdAt: event.at
		})
		.execute();
}

/** The most events one entry's history shows; a real review conversation is a handful. */
export const REVIEW_HISTORY_LIMIT = 500;

/**
 * An entry's status changes, oldest first (the order they happened in: ids are handed out under
 * the entry's row lock), at most the latest REVIEW_HISTORY_LIMIT. The caller decides whether the
 * reader may see them (`maySeeReview`).
 */
export async function listReviewEvents(db: Db, orgId: string, entryId: string): Promise<ReviewEvent[]> {
	const rows = await db
		.selectFrom('entryReviewEvent')
		.select([
			'entryReviewEvent.id',
			'entryReviewEvent.transition',
			'entryReviewEvent.fromStatus',
			'entryReviewEvent.toStatus',
			'entryReviewEvent.actorId',
			'entryReviewEvent.comment',
			'entryReviewEvent.createdAt'
		])
		// "User" is an Auth.js table the camelCase plugin would misspell; raw SQL names it as it is.
		.select(sql<string | null>`(select coalesce(u.name, u.email) from "User" u where u.id = entry_review_event.actor_id)`.as('actorName'))
		.where('entryReviewEvent.orgId', '=', orgId)
		.where('entryReviewEvent.entryId', '=', entryId)
		.orderBy('entryReviewEvent.id', 'desc')
		.limit(REVIEW_HISTORY_LIMIT)
		.execute();
	return rows.reverse().map((r) => ({
		id: String(r.id),
		transition: r.transition as EntryTransition,
		fromStatus: r.fromStatus,
		toStatus: r.toStatus,
		actorId: r.actorId,
		actorName: r.actorName,
		comment: r.comment,
		at: r.createdAt
	}));
}
