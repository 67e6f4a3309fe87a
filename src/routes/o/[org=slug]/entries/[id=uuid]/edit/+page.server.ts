import { error, fail, redirect } from '@sveltejs/kit';
import { formValuesFrom, formValuesOf, sameValues } from '$lib/entry-form';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { findUserById } from '$lib/server/auth/users';
import { db } from '$lib/server/db';
import { type EditorFailure, parseEntryFields, storedVersionOf } from '$lib/server/entries/editor';
import { reviewEventJson, traceJson } from '$lib/server/entries/json';
import { findEntry } from '$lib/server/entries/queries';
import { renderEntryParts } from '$lib/server/entries/render';
import { changeEntryStatus } from '$lib/server/entries/review';
import { listReviewEvents } from '$lib/server/entries/review-history';
import { mayEdit, maySeeReview, readerFor, TRANSITION_MESSAGES } from '$lib/server/entries/rules';
import { updateEntry } from '$lib/server/entries/service';
import { listEntryTraces } from '$lib/server/traces/service';
import type { Actions, PageServerLoad } from './$types';

const LOCKED_MESSAGE = 'You can change only your own drafts. Ask an author if this entry needs a change.';

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:draft');
	const entry = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!entry) error(404, 'Not found');
	const editable = mayEdit(member, entry);
	// Writers may look at their own entry while it waits for review or after it is published;
	// anyone else who may not change it is refused.
	if (!editable && entry.authorId !== member.userId) error(403, LOCKED_MESSAGE);
	const reviewer = entry.reviewComment && entry.reviewerId ? await findUserById(db, entry.reviewerId) : undefined;
	return {
		entry: {
			id: entry.id,
			version: entry.version,
			status: entry.status,
			values: formValuesOf(entry),
			authorName: entry.authorName,
			updatedAt: entry.updatedAt.toISOString(),
			submittedAt: entry.submittedAt?.toISOString() ?? null
		},
		editable,
		review: entry.reviewComment ? { comment: entry.reviewComment, by: reviewer?.name ?? reviewer?.email ?? 'An author' } : null,
		reviewHistory: maySeeReview(member, entry) ? (await listReviewEvents(db, member.orgId, entry.id)).map(reviewEventJson) : [],
		preview: renderEntryParts(entry, member.orgSlug),
		// The trace list renders from the page itself, so it shows without JavaScript too.
		traces: (await listEntryTraces(db, member.orgId, entry.id)).map(traceJson),
		maySubmit: editable && entry.status === 'draft' && (entry.authorId === member.userId || can(member.role, 'entry:editAny')),
		isAuthor: can(member.role, 'entry:review')
	};
};

/** The version a save is based on; "keep mine" after a conflict names the stored one instead. */
function baseVersion(form: FormData): number {
	return Number(form.get('overwrite') ?? form.get('version'));
}

/**
 * Saves the posted fields over `version`. Returns the saved entry's version, or the failure the
 * page renders (field errors, or a conflict with both versions). Unchanged fields write nothing.
 */
async function saveFields(params: { org: string; id: string }, form: FormData) {
	const member = await requireMember(params.org, 'entry:draft');
	const values = formValuesFrom(form);
	const parsed = parseEntryFields(values);
	if (!parsed.ok) return { member, failure: parsed.failure };
	const version = baseVersion(form);
	const current = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!current) error(404, 'Not found');
	// Saving what is already stored (a double submit, or the same edit made twice) is no change.
	if (sameValues(formValuesOf(current), values)) return { member, version: current.version };
	const result = await updateEntry(db, member, params.id, { ...parsed.fields, version }, 'Edited');
	switch (result.kind) {
		case 'saved':
			return { member, version: result.entry.version };
		case 'not_found':
			error(404, 'Not found');
		// falls through: error() never returns
		case 'forbidden':
			error(403, LOCKED_MESSAGE);
		// falls through
		case 'conflict':
			return {
				member,
				failure: fail(409, {
					values,
					conflict: storedVersionOf(result.current),
					message: `Someone saved version ${result.current.version} while you were editing. Nothing was saved: choose which version to keep.`
				} satisfies EditorFailure)
			};
	}
}

export const actions: Actions = {
	save: async ({ params, request }) => {
		const saved = await saveFields(params, await request.formData());
		if ('failure' in saved) return saved.failure;
		return { saved: { version: saved.version, at: new Date().toISOString() } };
	},
	submit: async ({ params, request, url }) => {
		await requireMember(params.org, 'entry:submit');
		const saved = await saveFields(params, await request.formData());
		if ('failure' in saved) return saved.failure;
		const result = await changeEntryStatus(db, saved.member, params.id, 'submit', '', url.origin);
		if (result.kind === 'not_found') error(404, 'Not found');
		if (result.kind === 'refused') {
			if (result.reason === 'forbidden') error(403, TRANSITION_MESSAGES.forbidden);
			return fail(409, { message: TRANSITION_MESSAGES[result.reason] });
		}
		const unmailed = result.mail?.failed ? `&unmailed=${result.mail.failed}` : '';
		redirect(303, `/o/${saved.member.orgSlug}/entries/${params.id}/edit?submitted=${result.mail?.sent ?? 0}${unmailed}`);
	}
};
