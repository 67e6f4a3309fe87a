import { error, json } from '@sveltejs/kit';
import { apiError } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { bundleFileName, exportBundle } from '$lib/server/transfer/export';
import type { RequestHandler } from './$types';

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/**
 * A bundle (JSON, format in the README) of one entry (`?entry=<id>`, authors and admins) or of the
 * whole organisation (admins), downloaded as a file.
 */
export const GET: RequestHandler = async ({ params, url }) => {
	const member = await requireMember(params.org, 'entry:export');
	const entryId = url.searchParams.get('entry') ?? undefined;
	if (entryId === undefined && !can(member.role, 'org:settings')) {
		return apiError(403, 'forbidden', 'Only admins export the whole organisation. Add ?entry=<id> to export one entry.');
	}
	if (entryId !== undefined && !UUID.test(entryId)) {
		return apiError(400, 'invalid_input', 'entry must be an entry id.', [{ path: 'entry', message: 'Must be an entry id.' }]);
	}
	const out = await exportBundle(db, { id: member.orgId, slug: member.orgSlug, name: member.orgName }, entryId);
	if (!out) error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such entry.' } });
	return json(out, {
		headers: {
			'content-disposition': `attachment; filename="${bundleFileName(member.orgSlug, entryId)}"`,
			'cache-control': 'no-store'
		}
	});
};
