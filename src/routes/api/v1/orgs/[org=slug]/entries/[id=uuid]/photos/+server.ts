import { error, json } from '@sveltejs/kit';
import { apiError } from '$lib/server/api/errors';
import { addPhoto, listReadablePhotos, PHOTO_MESSAGES, photoJson } from '$lib/server/attachments/service';
import { readPhotoUpload } from '$lib/server/attachments/upload';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import type { RequestHandler } from './$types';

function notFound(): never {
	error(404, { message: 'Not found', error: { code: 'not_found', message: 'No such entry.' } });
}

/** The entry's photos, each with its URL and the Markdown that shows it in the text. */
export const GET: RequestHandler = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:read');
	const found = await listReadablePhotos(db, member, params.id);
	if (!found) notFound();
	return json({ photos: found.photos.map((p) => photoJson(member.orgSlug, p, found.entry.body)), mayEdit: found.mayEdit });
};

/**
 * Adds a photo (JPEG, PNG or WebP, at most 8 MB, judged by its content): multipart with the file
 * in `photo`, or the image bytes as the body with `?name=`. Same edit rules as the entry.
 */
export const POST: RequestHandler = async ({ params, request, url }) => {
	const member = await requireMember(params.org, 'entry:draft');
	const upload = await readPhotoUpload(request, url);
	if (!upload.ok) {
		return json(
			{ error: { code: upload.code, reason: upload.reason, message: upload.message, issues: [{ path: 'photo', message: upload.message }] } },
			{ status: upload.status, headers: { 'cache-control': 'no-store' } }
		);
	}
	const result = await addPhoto(db, member, params.id, upload);
	switch (result.kind) {
		case 'not_found':
			notFound();
		// falls through: notFound() never returns
		case 'forbidden':
			return apiError(403, 'forbidden', PHOTO_MESSAGES.forbidden);
		case 'too_many':
			return apiError(409, 'conflict', PHOTO_MESSAGES.too_many);
		case 'saved': {
			const photo = photoJson(member.orgSlug, result.photo);
			return json({ photo }, { status: 201, headers: { location: photo.url } });
		}
	}
};
