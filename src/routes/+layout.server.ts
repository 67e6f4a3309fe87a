import { currentPrincipal } from '$lib/server/auth/guard';
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = async (event) => {
	const principal = await currentPrincipal(event);
	// Only what the top bar shows; never tokens or session data.
	const user = principal ? { id: principal.user.id, name: principal.user.name, email: principal.user.email } : null;
	return { user };
};
