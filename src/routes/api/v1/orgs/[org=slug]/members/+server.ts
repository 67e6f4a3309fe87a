import { json } from '@sveltejs/kit';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { listMembers } from '$lib/server/orgs/queries';
import type { RequestHandler } from './$types';

/** The organisation's members (admin). */
export const GET: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'member:read');
	const members = await listMembers(db, member.orgId);
	return json({
		members: members.map((m) => ({
			userId: m.userId,
			name: m.name,
			email: m.email,
			role: m.role,
			joinedAt: m.joinedAt.toISOString(),
			lastActiveAt: m.lastActiveAt?.toISOString() ?? null
		}))
	});
};
