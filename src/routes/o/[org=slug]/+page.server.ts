import { entryListQuery } from '$lib/schemas/entries';
import { requireMember } from '$lib/server/auth/guard';
import { can, ROLE_SUMMARIES } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { countInReview, listEntries } from '$lib/server/entries/queries';
import { readerFor } from '$lib/server/entries/rules';
import { indexLag } from '$lib/server/search/outbox';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'org:read');
	const reader = readerFor(member);
	const recent = await listEntries(db, member.orgId, reader, entryListQuery.parse({ limit: '12' }));
	return {
		roleSummary: ROLE_SUMMARIES[member.role],
		mayWrite: can(member.role, 'entry:draft'),
		mayAdminister: can(member.role, 'member:manage'),
		inReview: can(member.role, 'entry:review') ? await countInReview(db, member.orgId) : null,
		searchLag: can(member.role, 'org:settings') ? await indexLag(db, new Date(), member.orgId) : null,
		recent: recent.entries.map((e) => ({
			id: e.id,
			title: e.title,
			symptom: e.symptom,
			componentKind: e.componentKind,
			assembly: e.assembly,
			status: e.status,
			updatedAt: e.updatedAt.toISOString().slice(0, 10)
		}))
	};
};
