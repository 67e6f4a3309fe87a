import { sql } from 'kysely';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { entryCreate, traceUpload } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import { ensureUser } from '../../src/lib/server/auth/users';
import { findEntry } from '../../src/lib/server/entries/queries';
import { readerFor } from '../../src/lib/server/entries/rules';
import { attachQueryTrace, createEntry, transitionEntry } from '../../src/lib/server/entries/service';
import { draftFieldsFor, writeDraftFromCapture } from '../../src/lib/server/match/capture';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { backfillDescriptorTails } from '../../src/lib/server/traces/backfill';
import { findTraceCurve, insertTrace, processCapture, processSimulation } from '../../src/lib/server/traces/service';
import { descriptorTail } from '../../src/lib/signature/compare';
import { simulate } from '../../src/lib/signature/simulate';
import type { DeviceModel } from '../../src/lib/signature/types';
import { randomStyle, seededRandom, synthesiseSamples, writeCapture } from '../support/captures';
import { openTestDb, truncateAll } from './setup-db';

const db = openTestDb();
afterAll(() => db.destroy());
const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

let contributor: MemberContext;
let other: MemberContext;
let outsider: MemberContext;

async function member(orgId: string, slug: string, role: 'contributor' | 'author', email: string): Promise<MemberContext> {
	const u = await ensureUser(db, { email, name: email });
	await insertMembership(db, { orgId, userId: u.id, role });
	return { userId: u.id, orgId, orgSlug: slug, orgName: slug, role, via: 'session' };
}

/** A bench capture (noise, random phase) of a 4.7 µF capacitor with 2.2 kΩ of leakage, as a file. */
function benchFile(seed = 7) {
	const rng = seededRandom(seed);
	const model: DeviceModel = { kind: 'parallel', parts: [{ kind: 'capacitor', farads: 4.7e-6 }, { kind: 'resistor', ohms: 2200 }] };
	const file = writeCapture(synthesiseSamples(simulate(model, conditions, { points: 4096 }), { rng, noise: 0.01 }), randomStyle(rng));
	const bytes = new TextEncoder().encode(file.text);
	return { bytes, processed: processCapture(bytes, traceUpload.parse({ ...conditions, ...file.parseOptions })) };
}

async function queryTrace(m: MemberContext): Promise<string> {
	const { bytes, processed } = benchFile();
	return insertTrace(db, m.orgId, { entryId: null, role: 'query', label: '', createdBy: m.userId, processed, file: { name: 'q.csv', bytes } });
}

async function outboxFor(entryId: string) {
	return db.selectFrom('searchOutbox').select(['orgId', 'entityId', 'op']).where('entityId', '=', entryId).execute();
}

beforeEach(async () => {
	await truncateAll(db);
	const a = (await insertOrg(db, { name: 'A', slug: 'cap-a' }))!;
	const b = (await insertOrg(db, { name: 'B', slug: 'cap-b' }))!;
	contributor = await member(a.id, a.slug, 'contributor', 'pat@cap-a.example');
	other = await member(a.id, a.slug, 'contributor', 'lee@cap-a.example');
	outsider = await member(b.id, b.slug, 'author', 'sam@cap-b.example');
});

describe('re-homing a query trace onto an entry', () => {
	it('moves the trace, makes it a fault trace and records the entry change in the same transaction', async () => {
		const traceId = await queryTrace(contributor);
		const entry = await createEntry(db, contributor, entryCreate.parse({ title: 'Leaky C8', componentKind: 'electrolytic', symptom: 'Tilted ellipse' }));
		const before = (await outboxFor(entry.id)).length;
		expect(await attachQueryTrace(db, contributor, traceId, entry.id, 'fault', 'As found')).toEqual({ kind: 'attached' });
		const row = await db.selectFrom('trace').select(['entryId', 'role', 'label']).where('id', '=', traceId).executeTakeFirstOrThrow();
		expect(row).toEqual({ entryId: entry.id, role: 'fault', label: 'As found' });
		expect((await outboxFor(entry.id)).length).toBe(before + 1);
	});

	it("refuses another member's capture, a trace that is already attached, and another organisation's entry", async () => {
		const mine = await queryTrace(contributor);
		const theirs = await queryTrace(other);
		const entry = await createEntry(db, contributor, entryCreate.parse({ title: 'E', componentKind: 'other', symptom: 'S' }));
		const foreign = await createEntry(db, outsider, entryCreate.parse({ title: 'F', componentKind: 'other', symptom: 'S' }));
		expect(await attachQueryTrace(db, contributor, theirs, entry.id)).toEqual({ kind: 'not_found' });
		expect(await attachQueryTrace(db, contributor, mine, entry.id)).toEqual({ kind: 'attached' });
		expect(await attachQueryTrace(db, contributor, mine, entry.id)).toEqual({ kind: 'not_found' });
		// The outsider's own organisation does not hold org A's trace, whatever the entry.
		const stray = await queryTrace(contributor);
		expect(await attachQueryTrace(db, outsider, stray, foreign.id)).toEqual({ kind: 'not_found' });
		expect(await attachQueryTrace(db, contributor, stray, foreign.id)).toEqual({ kind: 'not_found' });
		const untouched = await db.selectFrom('trace').select(['entryId', 'role']).where('id', 'in', [theirs, stray]).execute();
		expect(untouched).toEqual([
			{ entryId: null, role: 'query' },
			{ entryId: null, role: 'query' }
		]);
	});

	it("refuses to move a capture onto an entry its writer may no longer edit (submitted for review)", async () => {
		const traceId = await queryTrace(contributor);
		const entry = await createEntry(db, contributor, entryCreate.parse({ title: 'E', componentKind: 'other', symptom: 'S' }));
		await transitionEntry(db, contributor, entry.id, 'submit', '');
		expect(await attachQueryTrace(db, contributor, traceId, entry.id)).toEqual({ kind: 'forbidden' });
	});
});

describe('writing a draft from a capture', () => {
	it('creates a draft titled after the analysis, with no symptom, and the capture as its fault trace', async () => {
		const { bytes, processed } = benchFile();
		// The engine reads a leaky capacitor as capacitive (a phasor fit, Xc = 1/(2πfC) ≈ 564 Ω at 60 Hz).
		expect(processed.analysis.class).toBe('capacitive');
		const id = await writeDraftFromCapture(db, contributor, processed, { name: 'bench.csv', bytes }, '');
		const entry = await findEntry(db, contributor.orgId, id, readerFor(contributor));
		expect(entry).toMatchObject({
			status: 'draft',
			symptom: '',
			componentKind: 'capacitor',
			title: 'Unknown signature — capacitive at 10 V · 1 kΩ · 60 Hz',
			authorId: contributor.userId
		});
		const traces = await db.selectFrom('trace').select(['role', 'entryId', 'fileName', 'fileBytes']).where('orgId', '=', contributor.orgId).execute();
		expect(traces).toEqual([{ role: 'fault', entryId: id, fileName: 'bench.csv', fileBytes: bytes.byteLength }]);
		expect((await outboxFor(id)).map((r) => r.op)).toContain('upsert');
	});

	it('keeps a draft without a symptom from being submitted or published, and the database backs that', async () => {
		const { bytes, processed } = benchFile();
		const id = await writeDraftFromCapture(db, contributor, processed, { name: 'bench.csv', bytes }, '');
		expect(await transitionEntry(db, contributor, id, 'submit', '')).toEqual({ kind: 'refused', reason: 'symptom_required' });
		await expect(sql`update entry set status = 'in_review' where id = ${id}`.execute(db)).rejects.toThrow(/entry_symptom_length/);
	});

	it('guesses the component kind from the class for every class', () => {
		const base = { confidence: 1, parameters: {}, residual: 0, summary: 's', warnings: [] };
		expect(draftFieldsFor({ ...base, class: 'junction' }, conditions).componentKind).toBe('diode');
		expect(draftFieldsFor({ ...base, class: 'zener' }, conditions).componentKind).toBe('zener');
		expect(draftFieldsFor({ ...base, class: 'inductive' }, conditions).componentKind).toBe('inductor');
		expect(draftFieldsFor({ ...base, class: 'short' }, { sourcePeakV: 2, sourceResistanceOhm: 100, frequencyHz: 60 }).title).toBe(
			'Unknown signature — short at 2 V · 100 Ω · 60 Hz'
		);
	});
});

describe('backfilling descriptor tails', () => {
	it("computes a missing tail from the trace's stored curve, the way the engine does for a new upload", async () => {
		const entry = await createEntry(db, contributor, entryCreate.parse({ title: 'E', componentKind: 'other', symptom: 'S' }));
		const { bytes, processed } = benchFile(11);
		const fresh = processed.descriptorTail;
		const captured = await insertTrace(db, contributor.orgId, { entryId: entry.id, role: 'fault', label: '', createdBy: contributor.userId, processed, file: { name: 'a.csv', bytes } });
		const simulated = await insertTrace(db, contributor.orgId, {
			entryId: entry.id,
			role: 'known-good',
			label: '',
			createdBy: contributor.userId,
			processed: processSimulation({ kind: 'capacitor', farads: 4.7e-6 }, conditions)
		});
		// As a row stored before the column existed looks after the migration.
		await db.updateTable('trace').set({ descriptorTail: null }).where('id', 'in', [captured, simulated]).execute();

		expect(await backfillDescriptorTails(db)).toBe(2);
		const rows = await db.selectFrom('trace').select(['id', 'descriptorTail']).where('orgId', '=', contributor.orgId).execute();
		const tail = new Map(rows.map((r) => [r.id, r.descriptorTail]));
		// Stored as real (float4): equal to the upload path's value to single precision.
		expect(tail.get(captured)).toBeCloseTo(fresh, 6);
		expect(tail.get(captured)!).toBeGreaterThan(0);
		const curve = (await findTraceCurve(db, contributor.orgId, simulated))!;
		expect(tail.get(simulated)).toBeCloseTo(descriptorTail(curve), 6);
		// Nothing left to do: a second run changes nothing.
		expect(await backfillDescriptorTails(db)).toBe(0);
	});

	it('works through more traces than one batch', async () => {
		const entry = await createEntry(db, contributor, entryCreate.parse({ title: 'E', componentKind: 'other', symptom: 'S' }));
		const processed = processSimulation({ kind: 'resistor', ohms: 2200 }, conditions);
		await db.transaction().execute(async (trx) => {
			for (let k = 0; k < 501; k++) await insertTrace(trx, contributor.orgId, { entryId: entry.id, role: 'other', label: '', createdBy: contributor.userId, processed });
		});
		await db.updateTable('trace').set({ descriptorTail: null }).execute();
		expect(await backfillDescriptorTails(db)).toBe(501);
		const left = await db.selectFrom('trace').select(sql<number>`count(*)::int`.as('n')).where('descriptorTail', 'is', null).executeTakeFirstOrThrow();
		expect(left.n).toBe(0);
	});
});
