import { requireMember } from '$lib/server/auth/guard';
import { can, ROLE_LABELS } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { countInReview } from '$lib/server/entries/queries';
import { orgSections } from '$lib/server/orgs/sections';
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = async ({ params, url }) => {
	const member = await requireMember(params.org, 'org:read');
	// Read on every navigation (the url dependency), so the review badge stays current.
	void url.pathname;
	const inReview = can(member.role, 'entry:review') ? await countInReview(db, member.orgId) : 0;
	return {
		org: {
			slug: member.orgSlug,
			name: member.orgName,
			role: member.role,
			roleLabel: ROLE_LABELS[member.role],
			sections: orgSections(member.orgSlug, member.role).map((s) =>
				s.href.endsWith('/review') && inReview > 0 ? { ...s, badge: inReview } : s
			)
		}
	};
};
