import type { Kysely } from 'kysely';
import { photoMarkdown, photoUrl } from '../../photos/urls';
import type { MemberContext } from '../auth/member';
import type { Database } from '../db/connect';
import { findEntry } from '../entries/queries';
import { mayEdit, readerFor } from '../entries/rules';
import { countEntryPhotos, deletePhoto, findPhoto, findPhotoData, insertPhoto, listEntryPhotos, MAX_PHOTOS_PER_ENTRY, type Photo } from './queries';
import type { PhotoUpload } from './upload';

/**
 * Units of work on entry photos. A photo belongs to one entry and follows its rules: whoever may
 * read the entry may see its photos (viewers: published entries only); whoever may edit it may add
 * and delete them.
 */

export type AddPhotoResult =
	| { kind: 'saved'; photo: Photo }
	| { kind: 'not_found' }
	| { kind: 'forbidden' }
	| { kind: 'too_many' };

export async function addPhoto(db: Kysely<Database>, member: MemberContext, entryId: string, upload: Extract<PhotoUpload, { ok: true }>): Promise<AddPhotoResult> {
	return db.transaction().execute(async (trx): Promise<AddPhotoResult> => {
		const entry = await findEntry(trx, member.orgId, entryId, readerFor(member));
		if (!entry) return { kind: 'not_found' };
		if (!mayEdit(member, entry)) return { kind: 'forbidden' };
		// Lock the entry so two uploads cannot both pass the count.
		await trx.selectFrom('entry').select('id').where('orgId', '=', member.orgId).where('id', '=', entryId).forUpdate().execute();
		if ((await countEntryPhotos(trx, member.orgId, entryId)) >= MAX_PHOTOS_PER_ENTRY) return { kind: 'too_many' };
		const id = await insertPhoto(trx, member.orgId, {
			entryId,
			fileName: upload.fileName,
			contentType: upload.type,
			width: upload.width,
			height: upload.height,
			data: upload.bytes,
			createdBy: member.userId
		});
		const photo = await findPhoto(trx, member.orgId, id);
		if (!photo) throw new Error('photo vanished inside its own transaction');
		return { kind: 'saved', photo };
	});
}

/** The photo and its entry when the member may see the entry; undefined otherwise (answer 404). */
export async function findReadablePhoto(db: Kysely<Database>, member: MemberContext, photoId: string) {
	const photo = await findPhoto(db, member.orgId, photoId);
	if (!photo) return undefined;
	const entry = await findEntry(db, member.orgId, photo.entryId, readerFor(member));
	return entry ? { photo, entry } : undefined;
}

export type RemovePhotoResult = 'deleted' | 'not_found' | 'forbidden';

export async function removePhoto(db: Kysely<Database>, member: MemberContext, photoId: string): Promise<RemovePhotoResult> {
	const found = await findReadablePhoto(db, member, photoId);
	if (!found) return 'not_found';
	if (!mayEdit(member, found.entry)) return 'forbidden';
	return (await deletePhoto(db, member.orgId, photoId)) ? 'deleted' : 'not_found';
}

/** The entry's photos when the member may read the entry; undefined otherwise. */
export async function listReadablePhotos(db: Kysely<Database>, member: MemberContext, entryId: string) {
	const entry = await findEntry(db, member.orgId, entryId, readerFor(member));
	if (!entry) return undefined;
	return { entry, photos: await listEntryPhotos(db, member.orgId, entryId), mayEdit: mayEdit(member, entry) };
}

export const PHOTO_MESSAGES = {
	too_many: `An entry holds at most ${MAX_PHOTOS_PER_ENTRY} photos. Delete one you no longer need first.`,
	forbidden: 'Your role does not allow changing this entry in its current state, so its photos cannot change either.'
} as const;

/** A photo as the API and the uploader show it, with the Markdown that places it in the text. */
export function photoJson(orgSlug: string, p: Photo, body?: string) {
	const url = photoUrl(orgSlug, p.id);
	return {
		id: p.id,
		entryId: p.entryId,
		fileName: p.fileName,
		contentType: p.contentType,
		bytes: p.bytes,
		width: p.width,
		height: p.height,
		url,
		markdown: photoMarkdown(orgSlug, p),
		/** Whether the entry's text shows this photo (deleting it would leave its alt text there). */
		...(body === undefined ? {} : { inBody: body.includes(p.id) }),
		createdAt: p.createdAt.toISOString()
	};
}
export type PhotoJson = ReturnType<typeof photoJson>;

/**
 * The photo's bytes as an HTTP response. The type is the one found in the bytes when it was
 * stored; `nosniff` stops a browser from guessing otherwise; the ETag is the content hash (an id
 * never changes content), so a revisit costs a 304. Cached privately only: access depends on
 * who is asking and on the entry's status.
 */
export async function photoResponse(db: Kysely<Database>, orgId: string, photo: Photo, request: Request): Promise<Response> {
	const etag = `"${photo.sha256}"`;
	const headers: Record<string, string> = {
		'content-type': photo.contentType,
		'x-content-type-options': 'nosniff',
		'cache-control': 'private, max-age=3600',
		etag,
		'content-disposition': `inline; filename="${photo.fileName.replace(/[^\w. -]+/g, '_')}"`,
		'cross-origin-resource-policy': 'same-origin',
		'content-security-policy': "default-src 'none'; sandbox"
	};
	const match = request.headers.get('if-none-match');
	if (match && match.split(',').some((t) => t.trim() === etag)) return new Response(null, { status: 304, headers });
	const data = await findPhotoData(db, orgId, photo.id);
	if (!data) return new Response(null, { status: 404 });
	return new Response(new Uint8Array(data), { headers: { ...headers, 'content-length': String(data.byteLength) } });
}
