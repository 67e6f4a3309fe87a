import { fail, redirect } from '@sveltejs/kit';
import { z } from 'zod';
import { requireUser } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { createOrganisation } from '$lib/server/orgs/members';
import { orgCreate } from '$lib/schemas/orgs';
import type { Actions, PageServerLoad } from './$types';

type OrgErrors = Partial<Record<'name' | 'slug', string[]>>;

export const load: PageServerLoad = async () => {
	await requireUser();
	return {};
};

export const actions: Actions = {
	default: async ({ request }) => {
		const user = await requireUser();
		const form = await request.formData();
		// Echoed back into the form, so cut to a length the page can show.
		const values = { name: String(form.get('name') ?? '').slice(0, 300), slug: String(form.get('slug') ?? '').slice(0, 100) };
		const parsed = orgCreate.safeParse(values);
		if (!parsed.success) return fail(400, { values, fieldErrors: z.flattenError(parsed.error).fieldErrors as OrgErrors });
		const org = await db.transaction().execute((trx) => createOrganisation(trx, { ...parsed.data, creatorId: user.id }));
		if (!org) return fail(409, { values, fieldErrors: { slug: ['That address is taken. Choose another.'] } as OrgErrors });
		redirect(303, `/o/${org.slug}`);
	}
};
