import { error, fail } from '@sveltejs/kit';
import { z } from 'zod';
import { entryListQuery, entryRef, entryReturn } from '$lib/schemas/entries';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { listEntries } from '$lib/server/entries/queries';
import { renderEntryParts } from '$lib/server/entries/render';
import { changeEntryStatus } from '$lib/server/entries/review';
import { readerFor, TRANSITION_MESSAGES } from '$lib/server/entries/rules';
import type { Actions, PageServerLoad } from './$types';

/** Oldest submissions first: the queue is worked from the front. */
const QUEUE_LIMIT = 100;

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:review');
	const page = await listEntries(
		db,
		member.orgId,
		readerFor(member),
		entryListQuery.parse({ status: 'in_review', sort: 'updated', order: 'asc', limit: String(QUEUE_LIMIT) })
	);
	return {
		queue: page.entries.map((e) => ({
			id: e.id,
			title: e.title,
			componentKind: e.componentKind,
			assembly: e.assembly,
			partNumber: e.partNumber,
			testPoint: e.testPoint,
			symptomHtml: renderEntryParts({ symptom: e.symptom }, member.orgSlug).symptom ?? '',
			authorName: e.authorName,
			mine: e.authorId === member.userId,
			submittedAt: (e.submittedAt ?? e.updatedAt).toISOString()
		})),
		more: page.nextCursor !== null
	};
};

type ReturnErrors = { id: string; comment: string; fieldErrors: { comment?: string[] } };

function refusal(reason: keyof typeof TRANSITION_MESSAGES, id: string) {
	if (reason === 'forbidden') error(403, TRANSITION_MESSAGES.forbidden);
	return fail(409, { id, notice: TRANSITION_MESSAGES[reason] });
}

export const actions: Actions = {
	publish: async ({ params, request, url }) => {
		const member = await requireMember(params.org, 'entry:publish');
		const parsed = entryRef.safeParse({ id: (await request.formData()).get('id') });
		if (!parsed.success) return fail(400, { notice: 'That entry no longer exists.' });
		const result = await changeEntryStatus(db, member, parsed.data.id, 'publish', '', url.origin);
		if (result.kind === 'not_found') return fail(404, { notice: 'That entry no longer exists.' });
		if (result.kind === 'refused') return refusal(result.reason, parsed.data.id);
		return { notice: `Published “${result.entry.title}”.${result.mail?.sent ? ' Its writer was told by e-mail.' : ''}` };
	},
	return: async ({ params, request, url }) => {
		const member = await requireMember(params.org, 'entry:review');
		const form = await request.formData();
		const values = { id: String(form.get('id') ?? ''), comment: String(form.get('comment') ?? '') };
		const parsed = entryReturn.safeParse(values);
		if (!parsed.success) {
			const errors = z.flattenError(parsed.error).fieldErrors;
			if (errors.id) return fail(400, { notice: errors.id[0] });
			return fail(400, { returned: { ...values, fieldErrors: { comment: errors.comment } } satisfies ReturnErrors });
		}
		const result = await changeEntryStatus(db, member, parsed.data.id, 'return', parsed.data.comment, url.origin);
		if (result.kind === 'not_found') return fail(404, { notice: 'That entry no longer exists.' });
		if (result.kind === 'refused') return refusal(result.reason, parsed.data.id);
		return {
			notice: `Sent “${result.entry.title}” back to its writer${result.mail?.sent ? ', who was told why by e-mail' : ''}.`
		};
	}
};
