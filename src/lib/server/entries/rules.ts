import type { EntryStatus, EntryTransition } from '../../schemas/entries';
import { type Action, can, type Role } from '../auth/permissions';
import type { Reader } from './queries';

/**
 * The entry lifecycle: draft → in review → published → archived, with "return" sending a
 * submission back to its writer with a comment. Pure: who may do what to which entry.
 */
export const TRANSITIONS: Readonly<Record<EntryTransition, { from: readonly EntryStatus[]; to: EntryStatus; action: Action }>> = {
	submit: { from: ['draft'], to: 'in_review', action: 'entry:submit' },
	// Authors may publish their own draft directly; a contributor's work always goes through review.
	publish: { from: ['draft', 'in_review'], to: 'published', action: 'entry:publish' },
	return: { from: ['in_review'], to: 'draft', action: 'entry:review' },
	archive: { from: ['published'], to: 'archived', action: 'entry:publish' },
	reopen: { from: ['archived'], to: 'draft', action: 'entry:editAny' }
};

export function readerFor(member: { userId: string; role: Role }): Reader {
	return {
		userId: member.userId,
		seesAll: can(member.role, 'entry:editAny'),
		seesOwn: can(member.role, 'entry:draft')
	};
}

/**
 * Whether this member may read the entry's review conversation (comments and status changes):
 * authors and admins for every entry, a contributor for the entries they wrote. Viewers never do,
 * and nobody else sees the comments on someone else's work.
 */
export function maySeeReview(member: { userId: string; role: Role }, entry: { authorId: string | null }): boolean {
	if (can(member.role, 'entry:editAny')) return true;
	return can(member.role, 'entry:draft') && entry.authorId !== null && entry.authorId === member.userId;
}

/** Whether this member may change the entry's fields now. */
export function mayEdit(member: { userId: string; role: Role }, entry: { authorId: string | null; status: EntryStatus }): boolean {
	if (can(member.role, 'entry:editAny')) return true;
	// Contributors edit their own drafts; once submitted, the entry waits for its review.
	return can(member.role, 'entry:draft') && entry.authorId === member.userId && entry.status === 'draft';
}

export type TransitionCheck = { ok: true; to: EntryStatus } | { ok: false; reason: 'forbidden' | 'wrong_status' | 'comment_required' | 'symptom_required' };

export function checkTransition(
	member: { userId: string; role: Role },
	entry: { authorId: string | null; status: EntryStatus; symptom?: string },
	transition: EntryTransition,
	comment: string
): TransitionCheck {
	const rule = TRANSITIONS[transition];
	if (!can(member.role, rule.action)) return { ok: false, reason: 'forbidden' };
	// Submitting someone else's draft is an author's job, not a fellow contributor's.
	if (transition === 'submit' && entry.authorId !== member.userId && !can(member.role, 'entry:editAny')) {
		return { ok: false, reason: 'forbidden' };
	}
	if (!rule.from.includes(entry.status)) return { ok: false, reason: 'wrong_status' };
	if (transition === 'return' && comment.trim() === '') return { ok: false, reason: 'comment_required' };
	// A draft written from an unknown capture may have no symptom yet; it needs one to leave draft.
	if ((transition === 'submit' || transition === 'publish') && entry.symptom !== undefined && entry.symptom.trim() === '') {
		return { ok: false, reason: 'symptom_required' };
	}
	return { ok: true, to: rule.to };
}

export const TRANSITION_MESSAGES = {
	forbidden: 'Your role does not allow this status change.',
	wrong_status: 'The entry is no longer in a state that allows this. Reload to see its current status.',
	comment_required: 'Say why you are sending it back, so the writer knows what to change.',
	symptom_required: 'Write the symptom in one line before sending the entry on.'
} as const;
