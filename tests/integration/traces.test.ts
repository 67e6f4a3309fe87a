import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { entryCreate, traceUpload } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import { ensureUser } from '../../src/lib/server/auth/users';
import { createEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import {
	deleteTrace,
	findTrace,
	findTraceCurve,
	findTraceFile,
	insertTrace,
	listEntryTraces,
	processCapture,
	processSimulation
} from '../../src/lib/server/traces/service';
import { shapeDistance } from '../../src/lib/signature/compare';
import { SignatureError } from '../../src/lib/signature/errors';
import { simulate } from '../../src/lib/signature/simulate';
import { randomStyle, seededRandom, synthesiseSamples, writeCapture } from '../support/captures';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());

const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
let author: MemberContext;
let outsider: MemberContext;
let entryId: string;

beforeEach(async () => {
	await truncateAll(db);
	const orgA = (await insertOrg(db, { name: 'Bench A', slug: 'bench-a' }))!;
	const orgB = (await insertOrg(db, { name: 'Bench B', slug: 'bench-b' }))!;
	const ua = await ensureUser(db, { email: 'author@a.example', name: 'A' });
	const ub = await ensureUser(db, { email: 'author@b.example', name: 'B' });
	await insertMembership(db, { orgId: orgA.id, userId: ua.id, role: 'author' });
	await insertMembership(db, { orgId: orgB.id, userId: ub.id, role: 'author' });
	author = { userId: ua.id, orgId: orgA.id, orgSlug: orgA.slug, orgName: orgA.name, role: 'author', via: 'session' };
	outsider = { userId: ub.id, orgId: orgB.id, orgSlug: orgB.slug, orgName: orgB.name, role: 'author', via: 'session' };
	entryId = (
		await createEntry(db, author, entryCreate.parse({ title: 'Pull-up reads high', componentKind: 'resistor', symptom: 'Slope too shallow' }))
	).id;
});

function captureOf(ohms: number, seed: number) {
	const rng = seededRandom(seed);
	const curve = simulate({ kind: 'resistor', ohms }, conditions, { points: 4096 });
	const written = writeCapture(synthesiseSamples(curve, { rng, noise: 0.01 }), randomStyle(rng, 'vi-csv'));
	return { bytes: new TextEncoder().encode(written.text), options: written.parseOptions };
}

describe('storing an uploaded capture', () => {
	it('re-analyses on the server, keeps the original file byte for byte, and stores the canonical curve', async () => {
		// A 2.2 kΩ resistor at Rs = 1 kΩ: slope R = ΔV/ΔI (Ohm's law).
		const { bytes, options } = captureOf(2200, 3);
		const upload = traceUpload.parse({ ...conditions, role: 'fault', label: 'R14 as found', ...options });
		const processed = processCapture(bytes, upload);
		const id = await insertTrace(db, author.orgId, { entryId, role: 'fault', label: upload.label, createdBy: author.userId, processed, file: { name: 'r14.csv', bytes } });

		const stored = await findTrace(db, author.orgId, id);
		expect(stored).toMatchObject({ role: 'fault', class: 'resistive', fileName: 'r14.csv', fileBytes: bytes.byteLength, conditions });
		const r = stored!.analysis.parameters.resistanceOhm;
		expect(r && 'value' in r && typeof r.value === 'number' ? r.value : NaN).toBeGreaterThan(2200 * 0.98);
		expect(r && 'value' in r && typeof r.value === 'number' ? r.value : NaN).toBeLessThan(2200 * 1.02);
		const file = await findTraceFile(db, author.orgId, id);
		expect(Buffer.compare(file!.data, Buffer.from(bytes))).toBe(0);
		const curve = await findTraceCurve(db, author.orgId, id);
		expect(curve!.v).toHaveLength(processed.curve.v.length);
		expect(shapeDistance(curve!, processed.curve)).toBeLessThan(1e-9);
		expect(await listEntryTraces(db, author.orgId, entryId)).toHaveLength(1);
	});

	it('rejects a file the engine cannot read with its typed error, and stores nothing', async () => {
		const upload = traceUpload.parse(conditions);
		expect(() => processCapture(new TextEncoder().encode('voltage,current\n1,2\n'), upload)).toThrowError(SignatureError);
		expect(await listEntryTraces(db, author.orgId, entryId)).toEqual([]);
	});

	it('refuses conditions outside the accepted ranges before the engine runs', () => {
		const r = traceUpload.safeParse({ sourcePeakV: 500, sourceResistanceOhm: 0.1, frequencyHz: 0 });
		expect(r.success).toBe(false);
		expect(r.error!.issues.map((i) => i.path[0]).sort()).toEqual(['frequencyHz', 'sourcePeakV', 'sourceResistanceOhm']);
	});

	it('stores a simulated known-good reference marked as simulated', async () => {
		const processed = processSimulation({ kind: 'resistor', ohms: 2200 }, conditions);
		const id = await insertTrace(db, author.orgId, { entryId, role: 'known-good', label: 'Expected 2.2 kΩ', createdBy: author.userId, processed, model: { kind: 'resistor', ohms: 2200 } });
		expect(await findTrace(db, author.orgId, id)).toMatchObject({ simulated: true, fileName: null, class: 'resistive' });
	});
});

describe('trace tenancy', () => {
	it('never shows or deletes another organisation’s trace', async () => {
		const { bytes, options } = captureOf(1000, 9);
		const processed = processCapture(bytes, traceUpload.parse({ ...conditions, ...options }));
		const id = await insertTrace(db, author.orgId, { entryId, role: 'fault', label: '', createdBy: author.userId, processed, file: { name: 'x.csv', bytes } });
		expect(await findTrace(db, outsider.orgId, id)).toBeUndefined();
		expect(await findTraceCurve(db, outsider.orgId, id)).toBeUndefined();
		expect(await findTraceFile(db, outsider.orgId, id)).toBeUndefined();
		expect(await deleteTrace(db, outsider.orgId, id)).toBeUndefined();
		expect(await findTrace(db, author.orgId, id)).toBeDefined();
	});
});
