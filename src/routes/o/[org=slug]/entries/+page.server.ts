import { error, fail, redirect } from '@sveltejs/kit';
import { COMPONENT_KIND_LABELS, entryListQuery } from '$lib/schemas/entries';
import { queryObject } from '$lib/server/api/query';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { entryJson } from '$lib/server/entries/json';
import { listEntries, listEntryAuthors, listEntryTags } from '$lib/server/entries/queries';
import { readerFor } from '$lib/server/entries/rules';
import { RESTORE_WINDOW_DAYS, restoreDeletedEntry } from '$lib/server/entries/service';
import { SIGNATURE_CLASSES } from '$lib/signature/types';
import type { Actions, PageServerLoad } from './$types';

/**
 * The entry table. The same URL serves the page without JavaScript (this load) and, with it,
 * the table's own fetches of `/api/v1/orgs/{org}/entries` as filters change.
 */
export const load: PageServerLoad = async ({ params, url }) => {
	const member = await requireMember(params.org, 'entry:read');
	const reader = readerFor(member);
	const parsed = entryListQuery.safeParse(queryObject(url));
	const query = parsed.success ? parsed.data : entryListQuery.parse({});
	const [page, tags, authors] = await Promise.all([
		listEntries(db, member.orgId, reader, query),
		listEntryTags(db, member.orgId, reader),
		listEntryAuthors(db, member.orgId, reader)
	]);
	const deleted = url.searchParams.get('deleted');
	return {
		entries: page.entries.map(entryJson),
		nextCursor: page.nextCursor,
		paged: Boolean(query.cursor),
		invalidFilters: !parsed.success,
		filters: {
			q: query.q ?? '',
			status: query.status?.join(',') ?? '',
			kind: query.kind?.join(',') ?? '',
			class: query.class?.join(',') ?? '',
			tag: query.tag?.join(',') ?? '',
			author: query.author ?? '',
			assembly: query.assembly ?? '',
			sort: query.sort,
			order: query.order
		},
		choices: {
			kinds: Object.entries(COMPONENT_KIND_LABELS).map(([value, label]) => ({ value, label })),
			classes: SIGNATURE_CLASSES,
			tags,
			authors
		},
		// Only roles that see more than published entries get a status filter.
		mayFilterStatus: reader.seesAll || reader.seesOwn,
		mayWrite: can(member.role, 'entry:draft'),
		justDeleted: deleted && can(member.role, 'entry:delete') ? { id: deleted, windowDays: RESTORE_WINDOW_DAYS } : null
	};
};

export const actions: Actions = {
	/** Undoes a delete from the notice the table shows right after it. */
	restore: async ({ params, request }) => {
		const member = await requireMember(params.org, 'entry:delete');
		const id = String((await request.formData()).get('id') ?? '');
		if (!/^[0-9a-f-]{36}$/i.test(id)) error(404, 'Not found');
		const restored = await restoreDeletedEntry(db, member, id);
		if (!restored) return fail(400, { restoreMessage: 'That entry can no longer be restored: it was not deleted, or its restore window has passed.' });
		redirect(303, `/o/${member.orgSlug}/entries/${id}?restored=1`);
	}
};
