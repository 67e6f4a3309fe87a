import { fail } from '@sveltejs/kit';
import { z } from 'zod';
import { createApiToken, listTokensOfUser, revokeOwnApiToken } from '$lib/server/auth/api-tokens';
import { requireUser } from '$lib/server/auth/guard';
import { grantableTokenRoles, ROLE_LABELS } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { findOrgBySlug, listOrgsOfUser } from '$lib/server/orgs/queries';
import { apiTokenCreate, apiTokenRef } from '$lib/schemas/orgs';
import type { RequestEvent } from './$types';

/**
 * The profile page's personal API tokens: the load part and the `createToken` / `revokeToken`
 * actions, spread into +page.server.ts beside the other profile sections. Results come back under
 * the `apiTokens` key.
 */
export async function loadApiTokens(userId: string) {
	const [tokens, orgs] = await Promise.all([listTokensOfUser(db, userId), listOrgsOfUser(db, userId)]);
	return {
		tokens: tokens.map((t) => ({
			id: t.id,
			name: t.name,
			orgName: t.orgName,
			orgSlug: t.orgSlug,
			role: t.role,
			prefix: t.prefix,
			createdAt: t.createdAt,
			lastUsedAt: t.lastUsedAt,
			revokedAt: t.revokedAt
		})),
		orgs: orgs.map((o) => ({
			slug: o.slug,
			name: o.name,
			roles: grantableTokenRoles(o.role).map((r) => ({ value: r, label: ROLE_LABELS[r] }))
		}))
	};
}

export const apiTokenActions = {
	createToken: async ({ request }: RequestEvent) => {
		const me = await requireUser();
		const form = await request.formData();
		const values = {
			name: String(form.get('name') ?? '').slice(0, 200),
			org: String(form.get('org') ?? '').slice(0, 100),
			role: String(form.get('role') ?? '')
		};
		const parsed = apiTokenCreate.safeParse(values);
		if (!parsed.success) return fail(400, { apiTokens: { values, fieldErrors: z.flattenError(parsed.error).fieldErrors } });
		const org = await findOrgBySlug(db, parsed.data.org);
		if (!org) return fail(400, { apiTokens: { values, fieldErrors: { org: ['Choose one of your organisations.'] } } });
		const result = await db.transaction().execute((trx) =>
			createApiToken(trx, { userId: me.id, orgId: org.id, name: parsed.data.name, role: parsed.data.role })
		);
		if (!result.ok) return fail(400, { apiTokens: { values, fieldErrors: { [result.field]: [result.message] } } });
		// The secret leaves the server this once; only its hash is kept.
		return { apiTokens: { created: { id: result.id, name: parsed.data.name, token: result.token } } };
	},
	revokeToken: async ({ request }: RequestEvent) => {
		const me = await requireUser();
		const parsed = apiTokenRef.safeParse({ id: (await request.formData()).get('id') });
		const done = parsed.success && (await db.transaction().execute((trx) => revokeOwnApiToken(trx, me.id, parsed.data.id)));
		if (!done) return fail(404, { apiTokens: { notice: 'That token is already revoked or is not yours.' } });
		return { apiTokens: { notice: 'Token revoked. Scripts using it now get “401 invalid_token”.' } };
	}
};
