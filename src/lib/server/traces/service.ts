import { createHash } from 'node:crypto';
import type { Kysely, Selectable, Transaction } from 'kysely';
import type { TraceRole, TraceUpload } from '../../schemas/entries';
import { analyse } from '../../signature/analyse';
import { analyseCapture, descriptor, descriptorTail, MAX_BYTES } from '../../signature/index';
import { simulate } from '../../signature/simulate';
import type { Analysis, CanonicalCurve, DeviceModel, TestConditions } from '../../signature/types';
import type { Database } from '../db/connect';
import type { Trace as TraceRow } from '../db/schema';

type Db = Kysely<Database> | Transaction<Database>;

/** What the server derived from a capture, before it is stored. The server is the authority. */
export interface ProcessedTrace {
	conditions: TestConditions;
	senseOhm: number | null;
	format: string | null;
	sampleCount: number;
	curve: CanonicalCurve;
	analysis: Analysis;
	descriptor: number[];
	/** Energy beyond the descriptor (`descriptorTail`), for the match index. */
	descriptorTail: number;
	warnings: string[];
}

/**
 * Parses, canonicalises and analyses an uploaded capture with the same engine the browser used
 * for its preview. Throws SignatureError (a message for the technician) on bad input.
 */
export function processCapture(bytes: Uint8Array, upload: TraceUpload): ProcessedTrace {
	const conditions = pickConditions(upload);
	const result = analyseCapture(bytes, conditions, {
		format: upload.format,
		voltageUnit: upload.voltageUnit,
		currentUnit: upload.currentUnit,
		senseOhm: upload.senseOhm,
		swapChannels: upload.swapChannels,
		invertVoltage: upload.invertVoltage,
		invertCurrent: upload.invertCurrent
	});
	return {
		conditions,
		senseOhm: upload.senseOhm ?? null,
		format: result.capture.format,
		sampleCount: result.capture.count,
		curve: result.curve,
		analysis: result.analysis,
		...descriptors(result.curve),
		warnings: result.warnings
	};
}

/** A simulated known-good reference: the predicted curve of a model at these conditions. */
export function processSimulation(model: DeviceModel, conditions: TestConditions): ProcessedTrace {
	const curve = simulate(model, conditions);
	return processCurve(curve, { sampleCount: curve.v.length });
}

/**
 * A canonical curve that is already known (one carried in an import bundle), analysed here as
 * every other trace is: the analysis and descriptors are always this server's own.
 */
export function processCurve(
	curve: CanonicalCurve,
	extra: { sampleCount: number; senseOhm?: number | null; format?: string | null; warnings?: string[] }
): ProcessedTrace {
	const analysis = analyse(curve);
	return {
		conditions: curve.conditions,
		senseOhm: extra.senseOhm ?? null,
		format: extra.format ?? null,
		sampleCount: extra.sampleCount,
		curve,
		analysis,
		...descriptors(curve),
		warnings: [...new Set([...(extra.warnings ?? []), ...analysis.warnings])]
	};
}

function descriptors(curve: CanonicalCurve): { descriptor: number[]; descriptorTail: number } {
	const d = descriptor(curve);
	return { descriptor: Array.from(d), descriptorTail: descriptorTail(curve, d) };
}

function pickConditions(u: TestConditions): TestConditions {
	return { sourcePeakV: u.sourcePeakV, sourceResistanceOhm: u.sourceResistanceOhm, frequencyHz: u.frequencyHz };
}

export const MAX_TRACE_BYTES = MAX_BYTES;

export interface StoredTrace {
	id: string;
	entryId: string | null;
	role: TraceRole;
	label: string;
	conditions: TestConditions;
	senseOhm: number | null;
	simulated: boolean;
	fileName: string | null;
	fileFormat: string | null;
	fileBytes: number | null;
	sampleCount: number;
	periods: number;
	class: string;
	residual: number;
	analysis: Analysis;
	warnings: string[];
	createdAt: Date;
}

/** Stores a processed trace with its original file (kept for provenance). Call inside the writer's transaction. */
export async function insertTrace(
	trx: Db,
	orgId: string,
	input: {
		entryId: string | null;
		role: TraceRole;
		label: string;
		createdBy: string;
		processed: ProcessedTrace;
		file?: { name: string; bytes: Uint8Array };
		model?: DeviceModel;
	}
): Promise<string> {
	const p = input.processed;
	const row = await trx
		.insertInto('trace')
		.values({
			orgId,
			entryId: input.entryId,
			role: input.role,
			label: input.label,
			sourcePeakV: p.conditions.sourcePeakV,
			sourceResistanceOhm: p.conditions.sourceResistanceOhm,
			frequencyHz: p.conditions.frequencyHz,
			senseOhm: p.senseOhm,
			simulated: p.curve.simulated,
			model: input.model ? JSON.stringify(input.model) : null,
			fileName: input.file?.name ?? null,
			fileFormat: p.format,
			fileBytes: input.file?.bytes.byteLength ?? null,
			fileSha256: input.file ? createHash('sha256').update(input.file.bytes).digest('hex') : null,
			fileData: input.file ? Buffer.from(input.file.bytes) : null,
			sampleCount: p.sampleCount,
			periods: p.curve.periods,
			canonical: JSON.stringify({ v: p.curve.v, i: p.curve.i, periodSpread: p.curve.periodSpread }),
			descriptor: p.descriptor,
			descriptorTail: p.descriptorTail,
			analysis: JSON.stringify(p.analysis),
			class: p.analysis.class,
			residual: p.analysis.residual,
			warnings: p.warnings,
			createdBy: input.createdBy
		})
		.returning('id')
		.executeTakeFirstOrThrow();
	return row.id;
}

const TRACE_COLUMNS = [
	'id',
	'entryId',
	'role',
	'label',
	'sourcePeakV',
	'sourceResistanceOhm',
	'frequencyHz',
	'senseOhm',
	'simulated',
	'fileName',
	'fileFormat',
	'fileBytes',
	'sampleCount',
	'periods',
	'class',
	'residual',
	'analysis',
	'warnings',
	'createdAt'
] as const;

function toStoredTrace(r: Pick<Selectable<TraceRow>, (typeof TRACE_COLUMNS)[number]>): StoredTrace {
	return {
		id: r.id,
		entryId: r.entryId,
		role: r.role as TraceRole,
		label: r.label,
		conditions: { sourcePeakV: r.sourcePeakV, sourceResistanceOhm: r.sourceResistanceOhm, frequencyHz: r.frequencyHz },
		senseOhm: r.senseOhm,
		simulated: r.simulated,
		fileName: r.fileName,
		fileFormat: r.fileFormat,
		fileBytes: r.fileBytes,
		sampleCount: r.sampleCount,
		periods: r.periods,
		class: r.class,
		residual: r.residual,
		analysis: r.analysis as unknown as Analysis,
		warnings: r.warnings,
		createdAt: r.createdAt
	};
}


export async function listEntryTraces(db: Db, orgId: string, entryId: string): Promise<StoredTrace[]> {
	const rows = await db
		.selectFrom('trace')
		.select(TRACE_COLUMNS)
		.where('orgId', '=', orgId)
		.where('entryId', '=', entryId)
		.orderBy('createdAt')
		.limit(100)
		.execute();
	return rows.map(toStoredTrace);
}

export async function findTrace(db: Db, orgId: string, id: string): Promise<StoredTrace | undefined> {
	const r = await db.selectFrom('trace').select(TRACE_COLUMNS).where('orgId', '=', orgId).where('id', '=', id).executeTakeFirst();
	return r ? toStoredTrace(r) : undefined;
}

const CURVE_COLUMNS = ['id', 'canonical', 'sourcePeakV', 'sourceResistanceOhm', 'frequencyHz', 'periods', 'simulated'] as const;

/** A stored row's canonical curve (SI units, canonical phase grid). */
export function toCurve(r: {
	canonical: unknown;
	sourcePeakV: number;
	sourceResistanceOhm: number;
	frequencyHz: number;
	periods: number;
	simulated: boolean;
}): CanonicalCurve {
	const c = r.canonical as { v: number[]; i: number[]; periodSpread: number | null };
	const conditions = { sourcePeakV: r.sourcePeakV, sourceResistanceOhm: r.sourceResistanceOhm, frequencyHz: r.frequencyHz };
	const isc = conditions.sourcePeakV / conditions.sourceResistanceOhm;
	return {
		conditions,
		v: c.v,
		i: c.i,
		vn: c.v.map((x) => x / conditions.sourcePeakV),
		in: c.i.map((x) => x / isc),
		periods: r.periods,
		periodSpread: c.periodSpread,
		simulated: r.simulated
	};
}

/** The trace's canonical curve (SI units, canonical phase grid). */
export async function findTraceCurve(db: Db, orgId: string, id: string): Promise<CanonicalCurve | undefined> {
	const r = await db.selectFrom('trace').select(CURVE_COLUMNS).where('orgId', '=', orgId).where('id', '=', id).executeTakeFirst();
	return r ? toCurve(r) : undefined;
}

/** Canonical curves of several traces of one organisation, by trace id. */
export async function findTraceCurves(db: Db, orgId: string, ids: string[]): Promise<Map<string, CanonicalCurve>> {
	if (ids.length === 0) return new Map();
	const rows = await db.selectFrom('trace').select(CURVE_COLUMNS).where('orgId', '=', orgId).where('id', 'in', ids).limit(ids.length).execute();
	return new Map(rows.map((r) => [r.id, toCurve(r)]));
}

/** The original uploaded file, for download. */
export async function findTraceFile(db: Db, orgId: string, id: string): Promise<{ name: string; data: Buffer } | undefined> {
	const r = await db.selectFrom('trace').select(['fileName', 'fileData']).where('orgId', '=', orgId).where('id', '=', id).executeTakeFirst();
	return r?.fileData && r.fileName ? { name: r.fileName, data: r.fileData } : undefined;
}

export async function deleteTrace(db: Db, orgId: string, id: string): Promise<{ entryId: string | null } | undefined> {
	return db.deleteFrom('trace').where('orgId', '=', orgId).where('id', '=', id).returning('entryId').executeTakeFirst();
}
