import { createHash } from 'node:crypto';
import { type Kysely, sql, type Transaction } from 'kysely';
import { rewritePhotoUrls } from '../../photos/urls';
import { checkImage, photoFileName } from '../../photos/image-check';
import { type Bundle, type BundleEntry, type ImportOptions } from '../../schemas/bundle';
import { type EntryFields, LIMITS } from '../../schemas/entries';
import { toCanonical } from '../../signature/curve';
import type { MemberContext } from '../auth/member';
import type { Database } from '../db/connect';
import { insertPhoto } from '../attachments/queries';
import { recordEntryChange } from '../entries/changes';
import { escapeLike, insertEntry, insertRevision } from '../entries/queries';
import { writeAudit } from '../orgs/audit';
import { insertTrace, processCurve, type ProcessedTrace } from '../traces/service';

/** What became of each entry of the bundle. */
export interface ImportReport {
	imported: { ref: string; id: string; title: string; status: string }[];
	/** Already in the organisation (same title and assembly) and left alone: policy "skip". */
	skipped: { ref: string; title: string; assembly: string; existingId: string }[];
	/** Already in the organisation, imported beside it as a new draft with a suffix: policy "copy". */
	copied: { ref: string; id: string; title: string; existingId: string }[];
	traces: number;
	photos: number;
}

/** A bundle that parsed but cannot be imported as it is (a damaged file inside it). Nothing is written. */
export class BundleContentError extends Error {
	constructor(
		message: string,
		readonly path: string
	) {
		super(message);
	}
}

const COPY_SUFFIX = ' (imported)';

/** A live entry of the organisation with this title and assembly (ignoring case and outer spaces). */
async function findSameEntry(trx: Transaction<Database>, orgId: string, title: string, assembly: string): Promise<string | undefined> {
	const row = await trx
		.selectFrom('entry')
		.select('id')
		.where('orgId', '=', orgId)
		.where('deletedAt', 'is', null)
		.where(sql<boolean>`lower(trim(title)) = lower(trim(${title}))`)
		.where('assembly', 'ilike', escapeLike(assembly.trim()))
		.limit(1)
		.executeTakeFirst();
	return row?.id;
}

function decode(base64: string, expectedSha: string, path: string, what: string): Buffer {
	const bytes = Buffer.from(base64, 'base64');
	if (createHash('sha256').update(bytes).digest('hex') !== expectedSha) {
		throw new BundleContentError(`${what} does not match its checksum: the bundle is damaged or was edited. Export it again.`, path);
	}
	return bytes;
}

/** The trace's curve from the bundle; this server analyses it again (it never trusts a stored analysis). */
function processBundleTrace(t: BundleEntry['traces'][number]): ProcessedTrace {
	const curve = toCanonical(t.canonical.v, t.canonical.i, t.conditions, {
		periods: t.periods,
		periodSpread: t.canonical.periodSpread,
		simulated: t.simulated
	});
	return processCurve(curve, { sampleCount: t.sampleCount, senseOhm: t.senseOhm, format: t.file?.format ?? null, warnings: t.warnings });
}

/**
 * Imports a bundle into the member's organisation in one transaction: new ids everywhere, the
 * importing member as author (the original author's name goes into the first revision's note),
 * photo references in the text pointed at the new photos, every trace analysed again and stored
 * through the upload path (so descriptors and the match index follow), a search-outbox row per
 * entry. An entry whose title and assembly already exist is never overwritten: it is skipped
 * (`onConflict: 'skip'`, the default) or imported beside the original as a new draft titled
 * "… (imported)" (`'copy'`). Throws BundleContentError (nothing written) for a damaged file inside.
 */
export async function importBundle(db: Kysely<Database>, member: MemberContext, input: Bundle, options: ImportOptions): Promise<ImportReport> {
	const report: ImportReport = { imported: [], skipped: [], copied: [], traces: 0, photos: 0 };
	const from = input.source.organisation;
	await db.transaction().execute(async (trx) => {
		for (const [index, e] of input.entries.entries()) {
			const at = `entries.${index}`;
			const existingId = await findSameEntry(trx, member.orgId, e.fields.title, e.fields.assembly);
			if (existingId && options.onConflict === 'skip') {
				report.skipped.push({ ref: e.ref, title: e.fields.title, assembly: e.fields.assembly, existingId });
				continue;
			}
			const asCopy = Boolean(existingId);
			const fields: EntryFields = {
				...e.fields,
				title: asCopy ? `${e.fields.title.slice(0, LIMITS.title - COPY_SUFFIX.length)}${COPY_SUFFIX}` : e.fields.title
			};
			const status = asCopy ? 'draft' : e.status;
			const id = await insertEntry(trx, member.orgId, member.userId, fields);

			const photoIds = new Map<string, string>();
			for (const [k, p] of e.photos.entries()) {
				const path = `${at}.photos.${k}`;
				const bytes = decode(p.data, p.sha256, `${path}.data`, `Photo "${p.fileName}"`);
				const check = checkImage(bytes);
				if (!check.ok) throw new BundleContentError(`Photo "${p.fileName}": ${check.message}`, `${path}.data`);
				const newId = await insertPhoto(trx, member.orgId, {
					entryId: id,
					fileName: photoFileName(p.fileName, check.type),
					contentType: check.type,
					width: check.width,
					height: check.height,
					data: bytes,
					createdBy: member.userId
				});
				await trx.updateTable('attachment').set({ createdAt: p.createdAt }).where('orgId', '=', member.orgId).where('id', '=', newId).execute();
				photoIds.set(p.ref.toLowerCase(), newId);
				report.photos++;
			}
			// The text shows the photos by URL: point those at the copies in this organisation.
			const rewrite = (s: string) => rewritePhotoUrls(s, from.slug, member.orgSlug, photoIds);
			for (const key of ['symptomDetail', 'cause', 'fix', 'body'] as const) fields[key] = rewrite(fields[key]);
			await trx
				.updateTable('entry')
				.set({
					symptomDetail: fields.symptomDetail,
					cause: fields.cause,
					fix: fields.fix,
					body: fields.body,
					status,
					reviewComment: asCopy ? null : e.reviewComment,
					createdAt: e.createdAt,
					updatedAt: asCopy ? sql`now()` : e.updatedAt,
					submittedAt: asCopy ? null : e.submittedAt,
					publishedAt: asCopy ? null : e.publishedAt
				})
				.where('orgId', '=', member.orgId)
				.where('id', '=', id)
				.execute();
			const by = e.authorName ? `, written by ${e.authorName}` : '';
			await insertRevision(trx, member.orgId, id, 1, member.userId, fields, `Imported from ${from.name}${by}`.slice(0, 500));

			for (const [k, t] of e.traces.entries()) {
				const path = `${at}.traces.${k}`;
				const file = t.file ? { name: t.file.name, bytes: decode(t.file.data, t.file.sha256, `${path}.file.data`, `Capture file "${t.file.name}"`) } : undefined;
				const traceId = await insertTrace(trx, member.orgId, {
					entryId: id,
					role: t.role,
					label: t.label,
					createdBy: member.userId,
					processed: processBundleTrace(t),
					file,
					model: t.model ?? undefined
				});
				await trx.updateTable('trace').set({ createdAt: t.createdAt }).where('orgId', '=', member.orgId).where('id', '=', traceId).execute();
				report.traces++;
			}
			await recordEntryChange(trx, member.orgId, id, 'upsert');
			if (asCopy) report.copied.push({ ref: e.ref, id, title: fields.title, existingId: existingId! });
			else report.imported.push({ ref: e.ref, id, title: fields.title, status });
		}
		await writeAudit(trx, member.orgId, {
			actorId: member.userId,
			action: 'bundle.imported',
			subject: `org:${from.slug}`,
			details: { from: from.name, imported: report.imported.length, copied: report.copied.length, skipped: report.skipped.length, traces: report.traces, photos: report.photos }
		});
	});
	return report;
}
