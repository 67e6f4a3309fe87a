import { error, fail } from '@sveltejs/kit';
import { z } from 'zod';
import { forgetMember, requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { renameOrganisation } from '$lib/server/orgs/members';
import { orgRename } from '$lib/schemas/orgs';
import type { Actions, PageServerLoad } from './$types';

type RenameErrors = Partial<Record<'name', string[]>>;

export const load: PageServerLoad = async ({ params, url }) => {
	const member = await requireMember(params.org, 'org:settings');
	return { address: `${url.origin}/o/${member.orgSlug}` };
};

export const actions: Actions = {
	rename: async ({ params, request }) => {
		const member = await requireMember(params.org, 'org:settings');
		const form = await request.formData();
		// Echoed back into the field, so cut to a length the page can show.
		const values = { name: String(form.get('name') ?? '').slice(0, 300) };
		const parsed = orgRename.safeParse(values);
		if (!parsed.success) return fail(400, { values, fieldErrors: z.flattenError(parsed.error).fieldErrors as RenameErrors });
		const result = await db.transaction().execute((trx) => renameOrganisation(trx, { orgId: member.orgId, actorId: member.userId, name: parsed.data.name }));
		if (!result) error(404, 'Not found');
		// The loads after this action (the top bar, this page) must show the new name.
		forgetMember(params.org);
		return { notice: result.changed ? `The organisation is now called ${parsed.data.name}.` : 'That is already its name; nothing changed.' };
	}
};
