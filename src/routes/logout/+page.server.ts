import { redirect } from '@sveltejs/kit';
import { signOut } from '../../auth';
import type { Actions, PageServerLoad } from './$types';

// Signing out changes state, so it is a POST (the user menu's form); a visit here just goes home.
export const load: PageServerLoad = () => redirect(303, '/');

export const actions: Actions = { default: signOut };
