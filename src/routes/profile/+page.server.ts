import { error, fail } from '@sveltejs/kit';
import { z } from 'zod';
import { requireUser } from '$lib/server/auth/guard';
import { findUserById, updateDisplayName } from '$lib/server/auth/users';
import { db } from '$lib/server/db';
import { profileUpdate } from '$lib/schemas/account';
import { apiTokenActions, loadApiTokens } from './api-tokens.server';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => {
	const me = await requireUser();
	const user = await findUserById(db, me.id);
	if (!user) error(404);
	return { profile: { email: user.email, name: user.name, createdAt: user.createdAt }, apiTokens: await loadApiTokens(me.id) };
};

// Each action returns its result under its own key, so several forms can share this page.
export const actions: Actions = {
	...apiTokenActions,
	displayName: async ({ request }) => {
		const me = await requireUser();
		const form = await request.formData();
		const raw = { name: String(form.get('name') ?? '') };
		const parsed = profileUpdate.safeParse(raw);
		if (!parsed.success) {
			return fail(400, { displayName: { values: raw, fieldErrors: z.flattenError(parsed.error).fieldErrors } });
		}
		const updated = await updateDisplayName(db, me.id, parsed.data.name);
		if (!updated) error(404);
		return { displayName: { success: true, values: { name: updated.name ?? '' } } };
	}
};
