import { error } from '@sveltejs/kit';
import { apiError } from '$lib/server/api/errors';
import { findReadablePhoto, PHOTO_MESSAGES, photoResponse, removePhoto } from '$lib/server/attachments/service';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import type { RequestHandler } from './$types';

function notFound(): never {
	error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such photo.' } });
}

/**
 * The photo's bytes, with the type found in them. This is the URL entry Markdown uses
 * (`![alt](/api/v1/orgs/<org>/photos/<id>)`): a browser sends its session cookie with it.
 */
export const GET: RequestHandler = async ({ params, request }) => {
	const member = await requireMember(params.org, 'entry:read');
	const found = await findReadablePhoto(db, member, params.photo);
	if (!found) notFound();
	return photoResponse(db, member.orgId, found.photo, request);
};

export const DELETE: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:draft');
	const result = await removePhoto(db, member, params.photo);
	if (result === 'not_found') notFound();
	if (result === 'forbidden') return apiError(403, 'forbidden', PHOTO_MESSAGES.forbidden);
	return new Response(null, { status: 204 });
};
