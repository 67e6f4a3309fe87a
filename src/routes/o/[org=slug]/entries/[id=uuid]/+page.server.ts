import { error, fail, redirect } from '@sveltejs/kit';
import { ENTRY_TRANSITIONS, entryTransition, type EntryTransition } from '$lib/schemas/entries';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { entryJson, reviewEventJson, traceJson } from '$lib/server/entries/json';
import { helpedState, recordEntryView } from '$lib/server/entries/helped';
import { findEntry } from '$lib/server/entries/queries';
import { listReviewEvents } from '$lib/server/entries/review-history';
import { checkTransition, mayEdit, maySeeReview, readerFor, TRANSITION_MESSAGES } from '$lib/server/entries/rules';
import { changeEntryStatus } from '$lib/server/entries/review';
import { deleteEntry } from '$lib/server/entries/service';
import { renderMarkdown } from '$lib/server/markdown';
import { photoUrlPrefix } from '$lib/photos/urls';
import { findTraceCurves, listEntryTraces } from '$lib/server/traces/service';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, url, request }) => {
	const member = await requireMember(params.org, 'entry:read');
	const reader = readerFor(member);
	const entry = await findEntry(db, member.orgId, params.id, reader);
	if (!entry) error(404, 'Not found');
	// A view is a reader opening the page, not the page re-rendering after one of its forms.
	if (request.method === 'GET') await recordEntryView(db, member.orgId, entry.id);
	const helped = (await helpedState(db, member.orgId, entry.id, reader)) ?? { helped: false, helpedCount: entry.helpedCount };
	const traces = await listEntryTraces(db, member.orgId, entry.id);
	const curves = await findTraceCurves(
		db,
		member.orgId,
		traces.map((t) => t.id)
	);
	// Markdown is rendered and sanitised here, on every output; stored text is never trusted as HTML.
	const md = (text: string) => (text.trim() ? renderMarkdown(text, { attachmentPrefix: photoUrlPrefix(member.orgSlug) }) : '');
	// null: this reader may not see the review conversation (viewers; contributors on others' entries).
	const reviewHistory = maySeeReview(member, entry) ? (await listReviewEvents(db, member.orgId, entry.id)).map(reviewEventJson) : null;
	const transitions = ENTRY_TRANSITIONS.filter((t) => checkTransition(member, entry, t, 'comment').ok);
	return {
		entry: entryJson(entry),
		html: { symptomDetail: md(entry.symptomDetail), cause: md(entry.cause), fix: md(entry.fix), body: md(entry.body) },
		traces: traces.map((t) => {
			const c = curves.get(t.id);
			return { ...traceJson(t), curve: c ? { v: c.v, i: c.i } : null };
		}),
		helped,
		reviewHistory,
		mayEdit: mayEdit(member, entry),
		mayDelete: can(member.role, 'entry:delete'),
		transitions,
		isWriter: entry.authorId === member.userId,
		restored: url.searchParams.has('restored')
	};
};

export const actions: Actions = {
	/**
	 * A status change (submit, publish, send back with a comment, archive, reopen); the rules decide
	 * who may. Submitting mails the reviewers; sending back or publishing a submission mails its writer.
	 */
	transition: async ({ params, request, url }) => {
		const member = await requireMember(params.org, 'entry:read');
		const form = await request.formData();
		const parsed = entryTransition.safeParse({ action: form.get('action'), comment: form.get('comment') ?? '' });
		if (!parsed.success) return fail(400, { transitionMessage: parsed.error.issues[0]?.message ?? 'The status change is not valid.', comment: String(form.get('comment') ?? '') });
		const result = await changeEntryStatus(db, member, params.id, parsed.data.action, parsed.data.comment, url.origin);
		if (result.kind === 'not_found') error(404, 'Not found');
		if (result.kind === 'refused') {
			const status = result.reason === 'forbidden' ? 403 : result.reason === 'comment_required' ? 400 : 409;
			return fail(status, { transitionMessage: TRANSITION_MESSAGES[result.reason], comment: parsed.data.comment });
		}
		return { transitioned: parsed.data.action as EntryTransition };
	},
	/** Soft delete (admins); the table then offers to undo it. */
	delete: async ({ params }) => {
		const member = await requireMember(params.org, 'entry:delete');
		const deleted = await deleteEntry(db, member, params.id);
		if (!deleted) error(404, 'Not found');
		redirect(303, `/o/${member.orgSlug}/entries?deleted=${params.id}`);
	}
};
