import { fail } from '@sveltejs/kit';
import { listActiveOrgTokens, revokeOrgApiToken } from '$lib/server/auth/api-tokens';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { listMembers } from '$lib/server/orgs/queries';
import { apiTokenRef } from '$lib/schemas/orgs';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'orgToken:manage');
	const [tokens, members] = await Promise.all([listActiveOrgTokens(db, member.orgId), listMembers(db, member.orgId)]);
	const owners = new Map(members.map((m) => [m.userId, m.name ?? m.email]));
	return { tokens: tokens.map((t) => ({ ...t, owner: owners.get(t.userId) ?? 'A former member' })) };
};

export const actions: Actions = {
	revoke: async ({ params, request }) => {
		const member = await requireMember(params.org, 'orgToken:manage');
		const parsed = apiTokenRef.safeParse({ id: (await request.formData()).get('id') });
		const done =
			parsed.success &&
			(await db.transaction().execute((trx) => revokeOrgApiToken(trx, { orgId: member.orgId, tokenId: parsed.data.id, actorId: member.userId })));
		if (!done) return fail(404, { notice: 'That token is already revoked.' });
		return { notice: 'Token revoked. Scripts using it now get “401 invalid_token”.' };
	}
};
