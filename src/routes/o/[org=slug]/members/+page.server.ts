import { fail, redirect } from '@sveltejs/kit';
import { requireMember } from '$lib/server/auth/guard';
import { ROLES, ROLE_LABELS } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { changeMemberRole, removeMember } from '$lib/server/orgs/members';
import { listMembers } from '$lib/server/orgs/queries';
import { memberRemove, memberRoleChange } from '$lib/schemas/orgs';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'member:read');
	return {
		members: await listMembers(db, member.orgId),
		me: member.userId,
		roles: ROLES.map((r) => ({ value: r, label: ROLE_LABELS[r] }))
	};
};

export const actions: Actions = {
	changeRole: async ({ params, request }) => {
		const member = await requireMember(params.org, 'member:manage');
		const form = await request.formData();
		const parsed = memberRoleChange.safeParse({ userId: form.get('userId'), role: form.get('role') });
		if (!parsed.success) {
			return fail(400, { userId: String(form.get('userId') ?? ''), message: 'Choose one of the roles listed.' });
		}
		const result = await db.transaction().execute((trx) =>
			changeMemberRole(trx, { orgId: member.orgId, actorId: member.userId, ...parsed.data })
		);
		if (!result.ok) return fail(result.code === 'last_admin' ? 409 : 404, { userId: parsed.data.userId, message: result.message });
		// Someone who just gave up their own admin role can no longer see this page.
		if (parsed.data.userId === member.userId && parsed.data.role !== 'admin') redirect(303, `/o/${member.orgSlug}`);
		return { userId: parsed.data.userId, saved: `Role changed to ${ROLE_LABELS[parsed.data.role].toLowerCase()}.` };
	},
	remove: async ({ params, request }) => {
		const member = await requireMember(params.org, 'member:manage');
		const form = await request.formData();
		const parsed = memberRemove.safeParse({ userId: form.get('userId') });
		if (!parsed.success) return fail(400, { userId: '', message: 'Choose a member.' });
		const result = await db.transaction().execute((trx) =>
			removeMember(trx, { orgId: member.orgId, actorId: member.userId, userId: parsed.data.userId })
		);
		if (!result.ok) return fail(result.code === 'last_admin' ? 409 : 404, { userId: parsed.data.userId, message: result.message });
		if (parsed.data.userId === member.userId) redirect(303, '/');
		return { userId: parsed.data.userId, saved: 'Member removed.' };
	}
};
