import { error, json } from '@sveltejs/kit';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { revisionJson } from '$lib/server/entries/json';
import { findEntry, listRevisions } from '$lib/server/entries/queries';
import { readerFor } from '$lib/server/entries/rules';
import type { RequestHandler } from './$types';

/** Every saved version of the entry, newest first, with the fields as they were saved. */
export const GET: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:read');
	const entry = await findEntry(db, member.orgId, params.id, readerFor(member));
	if (!entry) error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such entry.' } });
	return json({ revisions: (await listRevisions(db, member.orgId, entry.id)).map(revisionJson) });
};
