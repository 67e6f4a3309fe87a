import { requireMember } from '$lib/server/auth/guard';
import { can, ROLE_SUMMARIES } from '$lib/server/auth/permissions';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'org:read');
	return {
		roleSummary: ROLE_SUMMARIES[member.role],
		mayWrite: can(member.role, 'entry:draft'),
		mayAdminister: can(member.role, 'member:manage')
	};
};
