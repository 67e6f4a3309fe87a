import { error, fail } from '@sveltejs/kit';
import { z } from 'zod';
import { MAX_PHOTO_BYTES } from '$lib/photos/image-check';
import { addPhoto, listReadablePhotos, PHOTO_MESSAGES, photoJson, removePhoto } from '$lib/server/attachments/service';
import { readPhotoUpload } from '$lib/server/attachments/upload';
import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import type { Actions, PageServerLoad } from './$types';

/**
 * The entry's photos without script: a plain upload form and the list, each photo with the
 * Markdown to paste into the text. The editor mounts the same upload in PhotoUploader.
 */
export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'entry:draft');
	const found = await listReadablePhotos(db, member, params.id);
	if (!found) error(404, 'Not found');
	return {
		entry: { id: found.entry.id, title: found.entry.title },
		photos: found.photos.map((p) => photoJson(member.orgSlug, p, found.entry.body)),
		mayEdit: found.mayEdit,
		maxBytes: MAX_PHOTO_BYTES
	};
};

const photoRef = z.object({ photoId: z.uuid({ error: 'Choose a photo.' }) });

export const actions: Actions = {
	upload: async ({ params, request, url }) => {
		const member = await requireMember(params.org, 'entry:draft');
		const upload = await readPhotoUpload(request, url);
		if (!upload.ok) return fail(upload.status, { uploadError: upload.message });
		const result = await addPhoto(db, member, params.id, upload);
		if (result.kind === 'not_found') error(404, 'Not found');
		if (result.kind === 'forbidden') return fail(403, { uploadError: PHOTO_MESSAGES.forbidden });
		if (result.kind === 'too_many') return fail(409, { uploadError: PHOTO_MESSAGES.too_many });
		return { notice: `Photo added: ${result.photo.fileName}. Paste its Markdown into the entry's text to show it there.`, added: result.photo.id };
	},
	delete: async ({ params, request }) => {
		const member = await requireMember(params.org, 'entry:draft');
		const parsed = photoRef.safeParse({ photoId: (await request.formData()).get('photoId') });
		if (!parsed.success) return fail(400, { notice: 'Choose a photo to delete.' });
		const result = await removePhoto(db, member, parsed.data.photoId);
		if (result === 'not_found') return fail(404, { notice: 'That photo is already gone.' });
		if (result === 'forbidden') return fail(403, { notice: PHOTO_MESSAGES.forbidden });
		return { notice: 'Photo deleted.' };
	}
};
