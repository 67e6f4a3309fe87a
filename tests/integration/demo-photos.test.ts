import { afterAll, describe, expect, it } from 'vitest';
import { checkImage } from '../../src/lib/photos/image-check';
import { PHOTO_URL_PATTERN } from '../../src/lib/photos/urls';
import { seedDemo } from '../../src/lib/server/demo/seed';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());

describe('demo photos', () => {
	it('draws real PNGs for a handful of entries and shows each from its own entry text and first revision', async () => {
		await truncateAll(db);
		expect(await seedDemo(db)).toBe(true);
		const org = await db.selectFrom('organisation').select(['id', 'slug']).executeTakeFirstOrThrow();
		const photos = await db.selectFrom('attachment').select(['id', 'entryId', 'data', 'contentType', 'width', 'height']).where('orgId', '=', org.id).execute();
		expect(photos.length).toBe(10);
		for (const p of photos) {
			// The same content check an upload passes, and the stored size matches the header.
			expect(checkImage(new Uint8Array(p.data))).toEqual({ ok: true, type: 'image/png', width: p.width, height: p.height });
			const entry = await db.selectFrom('entry').select('body').where('id', '=', p.entryId).executeTakeFirstOrThrow();
			const refs = [...entry.body.matchAll(PHOTO_URL_PATTERN)];
			expect(refs.map((m) => m[2])).toContain(p.id);
			expect(refs.every((m) => m[1] === org.slug)).toBe(true);
			const revision = await db.selectFrom('entryRevision').select('snapshot').where('entryId', '=', p.entryId).where('version', '=', 1).executeTakeFirstOrThrow();
			expect((revision.snapshot as { body: string }).body).toBe(entry.body);
		}
		expect(new Set(photos.map((p) => p.entryId)).size).toBe(5);
	}, 60_000);
});
