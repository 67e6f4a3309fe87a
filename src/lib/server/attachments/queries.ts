import { createHash } from 'node:crypto';
import { type Kysely, sql, type Transaction } from 'kysely';
import type { PhotoType } from '../../photos/image-check';
import type { Database } from '../db/connect';

type Db = Kysely<Database> | Transaction<Database>;

/** A photo of an entry, without its bytes. */
export interface Photo {
	id: string;
	entryId: string;
	fileName: string;
	contentType: PhotoType;
	bytes: number;
	sha256: string;
	width: number | null;
	height: number | null;
	createdBy: string | null;
	createdAt: Date;
}

/** Photos an entry may hold; more is a gallery, not a repair note. */
export const MAX_PHOTOS_PER_ENTRY = 40;

const PHOTO_COLUMNS = ['id', 'entryId', 'fileName', 'contentType', 'bytes', 'sha256', 'width', 'height', 'createdBy', 'createdAt'] as const;

function toPhoto(r: Omit<Photo, 'contentType'> & { contentType: string }): Photo {
	return { ...r, contentType: r.contentType as PhotoType };
}

/** Stores a checked photo (call inside the writer's transaction). Returns its id. */
export async function insertPhoto(
	trx: Db,
	orgId: string,
	input: { entryId: string; fileName: string; contentType: PhotoType; width: number; height: number; data: Uint8Array; createdBy: string }
): Promise<string> {
	const row = await trx
		.insertInto('attachment')
		.values({
			orgId,
			entryId: input.entryId,
			fileName: input.fileName,
			contentType: input.contentType,
			bytes: input.data.byteLength,
			sha256: createHash('sha256').update(input.data).digest('hex'),
			data: Buffer.from(input.data.buffer, input.data.byteOffset, input.data.byteLength),
			width: input.width,
			height: input.height,
			createdBy: input.createdBy
		})
		.returning('id')
		.executeTakeFirstOrThrow();
	return row.id;
}

/** The entry's photos, oldest first (the order they were added). */
export async function listEntryPhotos(db: Db, orgId: string, entryId: string): Promise<Photo[]> {
	const rows = await db
		.selectFrom('attachment')
		.select(PHOTO_COLUMNS)
		.where('orgId', '=', orgId)
		.where('entryId', '=', entryId)
		.orderBy('createdAt')
		.orderBy('id')
		.limit(MAX_PHOTOS_PER_ENTRY * 2)
		.execute();
	return rows.map(toPhoto);
}

export async function countEntryPhotos(db: Db, orgId: string, entryId: string): Promise<number> {
	const r = await db
		.selectFrom('attachment')
		.select(sql<number>`count(*)::int`.as('n'))
		.where('orgId', '=', orgId)
		.where('entryId', '=', entryId)
		.executeTakeFirstOrThrow();
	return r.n;
}

/** One photo's metadata; undefined when the organisation has no such photo. */
export async function findPhoto(db: Db, orgId: string, id: string): Promise<Photo | undefined> {
	const r = await db.selectFrom('attachment').select(PHOTO_COLUMNS).where('orgId', '=', orgId).where('id', '=', id).executeTakeFirst();
	return r ? toPhoto(r) : undefined;
}

/** The stored bytes of a photo. */
export async function findPhotoData(db: Db, orgId: string, id: string): Promise<Buffer | undefined> {
	const r = await db.selectFrom('attachment').select('data').where('orgId', '=', orgId).where('id', '=', id).executeTakeFirst();
	return r?.data;
}

/** Photos of several entries with their bytes, for the export. */
export async function listPhotosWithData(db: Db, orgId: string, entryIds: string[]): Promise<(Photo & { data: Buffer })[]> {
	if (entryIds.length === 0) return [];
	const rows = await db
		.selectFrom('attachment')
		.select([...PHOTO_COLUMNS, 'data'])
		.where('orgId', '=', orgId)
		.where('entryId', 'in', entryIds)
		.orderBy('createdAt')
		.orderBy('id')
		.limit(entryIds.length * MAX_PHOTOS_PER_ENTRY * 2)
		.execute();
	return rows.map((r) => ({ ...toPhoto(r), data: r.data }));
}

export async function deletePhoto(db: Db, orgId: string, id: string): Promise<boolean> {
	const r = await db.deleteFrom('attachment').where('orgId', '=', orgId).where('id', '=', id).executeTakeFirst();
	return Number(r.numDeletedRows) === 1;
}
