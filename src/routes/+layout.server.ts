import { currentPrincipal } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { listOrgsOfUser } from '$lib/server/orgs/queries';
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = async (event) => {
	const principal = await currentPrincipal(event);
	// Only what the top bar shows; never tokens or session data.
	const user = principal ? { id: principal.user.id, name: principal.user.name, email: principal.user.email } : null;
	// The organisation switcher and the home page list the user's organisations (names, slugs and
	// the user's own role in each).
	const orgs = principal ? (await listOrgsOfUser(db, principal.user.id)).map((o) => ({ slug: o.slug, name: o.name, role: o.role })) : [];
	return { user, orgs };
};
