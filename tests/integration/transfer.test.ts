import { readFileSync } from 'node:fs';
import { beforeEach, afterAll, describe, expect, it } from 'vitest';
import { bundle as bundleSchema, type BundleInput } from '../../src/lib/schemas/bundle';
import { entryCreate } from '../../src/lib/schemas/entries';
import { photoMarkdown } from '../../src/lib/photos/urls';
import { addPhoto } from '../../src/lib/server/attachments/service';
import { checkedUpload } from '../../src/lib/server/attachments/upload';
import { ensureUser } from '../../src/lib/server/auth/users';
import { createEntry, transitionEntry, updateEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { insertTrace, processCapture, processSimulation } from '../../src/lib/server/traces/service';
import { exportBundle } from '../../src/lib/server/transfer/export';
import { BundleContentError, importBundle } from '../../src/lib/server/transfer/import';
import { readBundle } from '../../src/lib/server/transfer/read';
import { simulate } from '../../src/lib/signature/simulate';
import { traceUpload } from '../../src/lib/schemas/entries';
import { openTestDb, truncateAll } from './setup-db';

/**
 * Export → import between two organisations, at the service level (the endpoints and the page
 * only read the body and call these; their access rules are in org-access.test.ts).
 */
const db = openTestDb();
const PNG = new Uint8Array(readFileSync('tests/fixtures/photos/board-64x48.png'));
const JPEG = new Uint8Array(readFileSync('tests/fixtures/photos/board-64x48.jpg'));
const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

type Member = Parameters<typeof createEntry>[1];
let src: { id: string; slug: string; name: string };
let dst: { id: string; slug: string; name: string };
let author: Member;
let importer: Member;

afterAll(() => db.destroy());

beforeEach(async () => {
	await truncateAll(db);
	const a = (await insertOrg(db, { name: 'Source depot', slug: 'source-depot' }))!;
	const b = (await insertOrg(db, { name: 'Target depot', slug: 'target-depot' }))!;
	src = { id: a.id, slug: 'source-depot', name: 'Source depot' };
	dst = { id: b.id, slug: 'target-depot', name: 'Target depot' };
	const u1 = await ensureUser(db, { email: 'writer@source.example', name: 'Rhea Writer' });
	const u2 = await ensureUser(db, { email: 'admin@target.example', name: 'Target admin' });
	await insertMembership(db, { orgId: src.id, userId: u1.id, role: 'author' });
	await insertMembership(db, { orgId: dst.id, userId: u2.id, role: 'admin' });
	author = { userId: u1.id, orgId: src.id, orgSlug: src.slug, orgName: src.name, role: 'author', via: 'session' };
	importer = { userId: u2.id, orgId: dst.id, orgSlug: dst.slug, orgName: dst.name, role: 'admin', via: 'session' };
});

/** A published entry with a bench capture, a simulated known-good trace and two photos shown in its text. */
async function seedSource() {
	const e = await createEntry(db, author, entryCreate.parse({
		title: 'Output electrolytic C12 dried out',
		componentKind: 'electrolytic',
		partNumber: 'EC-10U-50V',
		assembly: 'PS-12 bench supply, rev B',
		testPoint: 'C12 + ↔ C12 −',
		symptom: 'Ellipse too round',
		cause: 'Dried out',
		fix: 'Replace',
		tags: ['e-cap', 'dried-out']
	}));
	const photos = [];
	for (const [name, bytes] of [['c12 top.png', PNG], ['c12 side.jpg', JPEG]] as const) {
		const up = checkedUpload(name, bytes);
		if (!up.ok) throw new Error(up.message);
		const r = await addPhoto(db, author, e.id, up);
		if (r.kind !== 'saved') throw new Error(r.kind);
		photos.push(r.photo);
	}
	const body = `## Photos\n${photos.map((p) => photoMarkdown(src.slug, p)).join('\n')}\n\nMeasured cold.`;
	const saved = await updateEntry(db, author, e.id, { version: 1, body });
	if (saved.kind !== 'saved') throw new Error(saved.kind);
	// A capture file as a bench exports it (2.2 µF at 10 V · 1 kΩ · 60 Hz), through the upload path.
	const curve = simulate({ kind: 'capacitor', farads: 2.2e-6 }, conditions, { points: 600 });
	const csv = ['voltage_V,current_mA', ...curve.v.map((v, k) => `${v},${curve.i[k] * 1000}`)].join('\n');
	const file = new TextEncoder().encode(csv);
	await insertTrace(db, src.id, { entryId: e.id, role: 'fault', label: 'As found', createdBy: author.userId, processed: processCapture(file, traceUpload.parse(conditions)), file: { name: 'c12.csv', bytes: file } });
	await insertTrace(db, src.id, { entryId: e.id, role: 'known-good', label: 'Expected', createdBy: author.userId, processed: processSimulation({ kind: 'capacitor', farads: 10e-6 }, conditions), model: { kind: 'capacitor', farads: 10e-6 } });
	await transitionEntry(db, author, e.id, 'publish', '');
	return { entryId: e.id, photos };
}

async function roundTrip(entryId?: string) {
	const exported = await exportBundle(db, src, entryId);
	// Through JSON text, as the download and the upload carry it.
	const read = readBundle(new TextEncoder().encode(JSON.stringify(exported)));
	if (!read.ok) throw new Error(read.message);
	return read.bundle;
}

const tracesOf = (orgId: string) =>
	db.selectFrom('trace').selectAll().where('orgId', '=', orgId).orderBy('role', 'desc').execute();
const photosOf = (orgId: string) => db.selectFrom('attachment').selectAll().where('orgId', '=', orgId).orderBy('createdAt').orderBy('fileName').execute();

describe('export → import into a second organisation', () => {
	it('gives identical content with new ids: fields, status, trace curves and files, photo bytes', async () => {
		const { entryId } = await seedSource();
		const bundle = await roundTrip();
		expect(bundle).toMatchObject({ format: 'curvelore-bundle', version: 1, source: { scope: 'organisation', organisation: { slug: src.slug } } });
		const report = await importBundle(db, importer, bundle, { onConflict: 'skip' });
		expect(report).toMatchObject({ skipped: [], copied: [], traces: 2, photos: 2 });
		expect(report.imported).toHaveLength(1);
		const newId = report.imported[0].id;
		expect(newId).not.toBe(entryId);

		const before = await db.selectFrom('entry').selectAll().where('id', '=', entryId).executeTakeFirstOrThrow();
		const after = await db.selectFrom('entry').selectAll().where('id', '=', newId).executeTakeFirstOrThrow();
		expect(after.orgId).toBe(dst.id);
		expect(after.authorId).toBe(importer.userId);
		for (const k of ['title', 'componentKind', 'partNumber', 'package', 'assembly', 'testPoint', 'symptom', 'symptomDetail', 'cause', 'fix', 'tags', 'status'] as const) {
			expect(after[k], k).toEqual(before[k]);
		}
		expect(after.publishedAt).toEqual(before.publishedAt);

		// Photos: the same bytes under new ids, and the text points at the new ones in this organisation.
		const [oldPhotos, newPhotos] = [await photosOf(src.id), await photosOf(dst.id)];
		expect(newPhotos.map((p) => [p.fileName, p.contentType, p.sha256])).toEqual(oldPhotos.map((p) => [p.fileName, p.contentType, p.sha256]));
		for (const [k, p] of newPhotos.entries()) {
			expect(Buffer.compare(p.data, oldPhotos[k].data)).toBe(0);
			expect(p.id).not.toBe(oldPhotos[k].id);
			expect(p.entryId).toBe(newId);
		}
		let expectedBody = before.body;
		for (const [k, p] of oldPhotos.entries()) expectedBody = expectedBody.replace(`/api/v1/orgs/${src.slug}/photos/${p.id}`, `/api/v1/orgs/${dst.slug}/photos/${newPhotos[k].id}`);
		expect(after.body).toBe(expectedBody);
		expect(after.body).not.toContain(src.slug);

		// Traces: the same curves (exactly: JSON doubles round-trip), files and conditions; the
		// descriptor and analysis recomputed by this server come out the same.
		const [oldTraces, newTraces] = [await tracesOf(src.id), await tracesOf(dst.id)];
		expect(newTraces).toHaveLength(2);
		for (const [k, t] of newTraces.entries()) {
			const o = oldTraces[k];
			expect(t.id).not.toBe(o.id);
			expect(t.entryId).toBe(newId);
			expect(t.canonical).toEqual(o.canonical);
			for (const c of ['role', 'label', 'sourcePeakV', 'sourceResistanceOhm', 'frequencyHz', 'simulated', 'model', 'fileName', 'fileFormat', 'fileSha256', 'sampleCount', 'periods', 'class', 'residual', 'descriptor', 'descriptorTail', 'analysis'] as const) {
				expect(t[c], c).toEqual(o[c]);
			}
			expect(t.fileData === null ? null : Buffer.compare(t.fileData, o.fileData!)).toBe(t.fileData === null ? null : 0);
		}

		// One revision naming where it came from and who wrote it; a search-outbox row for the entry.
		const revisions = await db.selectFrom('entryRevision').selectAll().where('entryId', '=', newId).execute();
		expect(revisions).toHaveLength(1);
		expect(revisions[0].note).toBe('Imported from Source depot, written by Rhea Writer');
		const outbox = await db.selectFrom('searchOutbox').selectAll().where('entityId', '=', newId).where('orgId', '=', dst.id).execute();
		expect(outbox.length).toBeGreaterThan(0);
	});

	it('does not silently overwrite on a second import: skips by default, or adds a draft copy', async () => {
		await seedSource();
		const bundle = await roundTrip();
		const first = await importBundle(db, importer, bundle, { onConflict: 'skip' });
		const second = await importBundle(db, importer, bundle, { onConflict: 'skip' });
		expect(second.imported).toEqual([]);
		expect(second.skipped).toEqual([expect.objectContaining({ title: 'Output electrolytic C12 dried out', existingId: first.imported[0].id })]);
		expect(second).toMatchObject({ traces: 0, photos: 0 });
		const third = await importBundle(db, importer, bundle, { onConflict: 'copy' });
		expect(third.copied).toHaveLength(1);
		const copy = await db.selectFrom('entry').selectAll().where('id', '=', third.copied[0].id).executeTakeFirstOrThrow();
		expect(copy).toMatchObject({ title: 'Output electrolytic C12 dried out (imported)', status: 'draft' });
		const original = await db.selectFrom('entry').selectAll().where('id', '=', first.imported[0].id).executeTakeFirstOrThrow();
		expect(original).toMatchObject({ status: 'published', version: 1 });
		expect(await db.selectFrom('entry').select('id').where('orgId', '=', dst.id).execute()).toHaveLength(2);
	});

	it('exports one entry on its own, and nothing of another organisation', async () => {
		const { entryId } = await seedSource();
		await createEntry(db, author, entryCreate.parse({ title: 'Another', componentKind: 'resistor', symptom: 'Open' }));
		const one = await roundTrip(entryId);
		expect(one.source.scope).toBe('entry');
		expect(one.entries.map((e) => e.ref)).toEqual([entryId]);
		expect((await roundTrip()).entries).toHaveLength(2);
		// The target organisation's export does not see the source's entries, nor their ids.
		expect((await exportBundle(db, dst))!.entries).toEqual([]);
		expect(await exportBundle(db, dst, entryId)).toBeUndefined();
	});

	it('writes nothing when a file inside the bundle is damaged, and says which one', async () => {
		await seedSource();
		const bundle = await roundTrip();
		const tampered = structuredClone(bundle);
		const photo = tampered.entries[0].photos[1];
		photo.data = Buffer.from(Buffer.from(photo.data, 'base64').subarray(0, 300)).toString('base64');
		await expect(importBundle(db, importer, tampered, { onConflict: 'skip' })).rejects.toThrow(BundleContentError);
		await expect(importBundle(db, importer, tampered, { onConflict: 'skip' })).rejects.toMatchObject({ path: 'entries.0.photos.1.data' });
		expect(await db.selectFrom('entry').select('id').where('orgId', '=', dst.id).execute()).toEqual([]);
		expect(await db.selectFrom('attachment').select('id').where('orgId', '=', dst.id).execute()).toEqual([]);
		expect(await db.selectFrom('trace').select('id').where('orgId', '=', dst.id).execute()).toEqual([]);
	});

	it('refuses files that are not bundles with clear messages', async () => {
		const enc = (s: string) => new TextEncoder().encode(s);
		expect(readBundle(enc('not json'))).toMatchObject({ ok: false, status: 400, message: expect.stringContaining('not JSON') });
		expect(readBundle(enc('{"format":"other"}'))).toMatchObject({ ok: false, message: expect.stringContaining('not a Curvelore bundle') });
		expect(readBundle(undefined)).toMatchObject({ ok: false, status: 413 });
		expect(readBundle(new Uint8Array(0))).toMatchObject({ ok: false, message: expect.stringContaining('empty') });
		const { entryId } = await seedSource();
		const good = (await exportBundle(db, src, entryId)) as BundleInput;
		const future = { ...good, version: 2 };
		expect(readBundle(enc(JSON.stringify(future)))).toMatchObject({ ok: false, message: expect.stringContaining('version') });
		const shortCurve = structuredClone(good);
		shortCurve.entries[0].traces![0].canonical.v = [1, 2, 3];
		const r = readBundle(enc(JSON.stringify(shortCurve)));
		expect(r.ok).toBe(false);
		if (!r.ok) expect(r.issues[0].path).toBe('entries.0.traces.0.canonical.v');
		expect(bundleSchema.safeParse(good).success).toBe(true);
	});
});
