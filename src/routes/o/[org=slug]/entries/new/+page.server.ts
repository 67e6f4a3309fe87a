import { redirect } from '@sveltejs/kit';
import { emptyFormValues, formValuesFrom } from '$lib/entry-form';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { parseEntryFields } from '$lib/server/entries/editor';
import { createEntry } from '$lib/server/entries/service';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params }) => {
	await requireMember(params.org, 'entry:draft');
	return { values: emptyFormValues() };
};

export const actions: Actions = {
	create: async ({ params, request }) => {
		const member = await requireMember(params.org, 'entry:draft');
		const parsed = parseEntryFields(formValuesFrom(await request.formData()));
		if (!parsed.ok) return parsed.failure;
		const entry = await createEntry(db, member, parsed.fields);
		redirect(303, `/o/${member.orgSlug}/entries/${entry.id}/edit?saved=1`);
	}
};
