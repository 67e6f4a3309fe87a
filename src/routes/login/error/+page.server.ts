import { SIGN_IN_LINK_MINUTES } from '../../../auth';
import type { PageServerLoad } from './$types';

/** Auth.js names what went wrong in `?error=`; anything unknown gets the general message. */
export const load: PageServerLoad = async ({ url }) => {
	const code = url.searchParams.get('error');
	const kind = code === 'Verification' ? 'link' : code === 'AccessDenied' ? 'denied' : 'other';
	return { kind, linkMinutes: SIGN_IN_LINK_MINUTES };
};
