import type { Kysely } from 'kysely';
import { BUNDLE_FORMAT, BUNDLE_VERSION, type BundleInput } from '../../schemas/bundle';
import type { TraceRole } from '../../schemas/entries';
import type { Database } from '../db/connect';
import { type Entry, findEntry, listEntries, snapshotOf } from '../entries/queries';
import { listPhotosWithData } from '../attachments/queries';

type EntryInput = BundleInput['entries'][number];

/** Every live entry of the organisation, in pages (deliberately everything: the admin's export). */
async function allEntries(db: Kysely<Database>, orgId: string): Promise<Entry[]> {
	const reader = { userId: '', seesAll: true, seesOwn: true };
	const out: Entry[] = [];
	let cursor: string | undefined;
	for (;;) {
		const page = await listEntries(db, orgId, reader, { sort: 'created', order: 'asc', limit: 100, cursor });
		out.push(...page.entries);
		if (!page.nextCursor) return out;
		cursor = page.nextCursor;
	}
}

/** The traces of these entries with everything an import needs (query traces are not exported). */
async function tracesOf(db: Kysely<Database>, orgId: string, entryIds: string[]) {
	if (entryIds.length === 0) return [];
	return db
		.selectFrom('trace')
		.select([
			'id',
			'entryId',
			'role',
			'label',
			'sourcePeakV',
			'sourceResistanceOhm',
			'frequencyHz',
			'senseOhm',
			'simulated',
			'model',
			'fileName',
			'fileFormat',
			'fileBytes',
			'fileSha256',
			'fileData',
			'sampleCount',
			'periods',
			'canonical',
			'analysis',
			'warnings',
			'createdAt'
		])
		.where('orgId', '=', orgId)
		.where('entryId', 'in', entryIds)
		.orderBy('createdAt')
		.orderBy('id')
		.limit(entryIds.length * 100)
		.execute();
}

/**
 * The bundle of one entry (`entryId`) or of the whole organisation. Entries keep their status,
 * dates and author's name; ids are kept only as `ref`s that tie the bundle together.
 * Returns undefined when the entry does not exist.
 */
export async function exportBundle(
	db: Kysely<Database>,
	org: { id: string; slug: string; name: string },
	entryId?: string
): Promise<BundleInput | undefined> {
	let entries: Entry[];
	if (entryId) {
		const one = await findEntry(db, org.id, entryId, { userId: '', seesAll: true, seesOwn: true });
		if (!one) return undefined;
		entries = [one];
	} else {
		entries = await allEntries(db, org.id);
	}
	const ids = entries.map((e) => e.id);
	const [traces, photos] = await Promise.all([tracesOf(db, org.id, ids), listPhotosWithData(db, org.id, ids)]);
	const out: EntryInput[] = entries.map((e) => ({
		ref: e.id,
		fields: snapshotOf(e),
		status: e.status,
		authorName: e.authorName,
		reviewComment: e.reviewComment,
		createdAt: e.createdAt.toISOString(),
		updatedAt: e.updatedAt.toISOString(),
		submittedAt: e.submittedAt?.toISOString() ?? null,
		publishedAt: e.publishedAt?.toISOString() ?? null,
		traces: [],
		photos: []
	}));
	const byId = new Map(out.map((e) => [e.ref, e]));
	for (const t of traces) {
		const canonical = t.canonical as unknown as { v: number[]; i: number[]; periodSpread: number | null };
		byId.get(t.entryId!)?.traces!.push({
			ref: t.id,
			role: t.role as Exclude<TraceRole, 'query'>,
			label: t.label,
			conditions: { sourcePeakV: t.sourcePeakV, sourceResistanceOhm: t.sourceResistanceOhm, frequencyHz: t.frequencyHz },
			senseOhm: t.senseOhm,
			simulated: t.simulated,
			model: (t.model as never) ?? null,
			file:
				t.fileData && t.fileName
					? { name: t.fileName, format: t.fileFormat, bytes: t.fileData.byteLength, sha256: t.fileSha256 ?? '', data: t.fileData.toString('base64') }
					: null,
			sampleCount: t.sampleCount,
			periods: t.periods,
			canonical: { v: canonical.v, i: canonical.i, periodSpread: canonical.periodSpread ?? null },
			analysis: t.analysis,
			warnings: t.warnings,
			createdAt: t.createdAt.toISOString()
		});
	}
	for (const p of photos) {
		byId.get(p.entryId)?.photos!.push({
			ref: p.id,
			fileName: p.fileName,
			contentType: p.contentType,
			bytes: p.bytes,
			sha256: p.sha256,
			width: p.width,
			height: p.height,
			createdAt: p.createdAt.toISOString(),
			data: p.data.toString('base64')
		});
	}
	return {
		format: BUNDLE_FORMAT,
		version: BUNDLE_VERSION,
		exportedAt: new Date().toISOString(),
		source: { organisation: { slug: org.slug, name: org.name }, scope: entryId ? 'entry' : 'organisation' },
		entries: out
	};
}

/** A file name for the download: `curvelore-<org>-<date>.json`, or with the entry's id. */
export function bundleFileName(orgSlug: string, entryId?: string, now = new Date()): string {
	const day = now.toISOString().slice(0, 10);
	return `curvelore-${orgSlug}${entryId ? `-entry-${entryId.slice(0, 8)}` : ''}-${day}.json`;
}
