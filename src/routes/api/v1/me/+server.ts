import { json } from '@sveltejs/kit';
import { getRequestEvent } from '$app/server';
import { requireUser } from '$lib/server/auth/guard';
import { lowerRole } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { listOrgsOfUser } from '$lib/server/orgs/queries';
import type { RequestHandler } from './$types';

/**
 * Who the caller is and in which organisations, with the role in effect. A token caller sees only
 * the organisation the token is for, at the token's role (never above their own).
 */
export const GET: RequestHandler = async () => {
	const user = await requireUser();
	const token = getRequestEvent().locals.apiToken;
	const orgs = (await listOrgsOfUser(db, user.id))
		.filter((o) => !token || o.id === token.orgId)
		.map((o) => ({ slug: o.slug, name: o.name, role: token ? lowerRole(token.role, o.role) : o.role }));
	return json(
		{
			user: { id: user.id, email: user.email, name: user.name },
			authenticatedBy: token ? 'token' : 'session',
			organisations: orgs
		},
		{ headers: { 'cache-control': 'no-store' } }
	);
};
