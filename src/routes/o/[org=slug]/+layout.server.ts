import { requireMember } from '$lib/server/auth/guard';
import { ROLE_LABELS } from '$lib/server/auth/permissions';
import { orgSections } from '$lib/server/orgs/sections';
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'org:read');
	return {
		org: {
			slug: member.orgSlug,
			name: member.orgName,
			role: member.role,
			roleLabel: ROLE_LABELS[member.role],
			sections: orgSections(member.orgSlug, member.role)
		}
	};
};
