import { json } from '@sveltejs/kit';
import { requireMember } from '$lib/server/auth/guard';
import { allowedActions } from '$lib/server/auth/permissions';
import type { RequestHandler } from './$types';

/** The organisation as the caller sees it: name, their role in effect and what it allows. */
export const GET: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'org:read');
	return json({
		organisation: { slug: member.orgSlug, name: member.orgName },
		role: member.role,
		actions: allowedActions(member.role)
	});
};
