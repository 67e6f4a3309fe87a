import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { entryCreate, traceUpload } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import { ensureUser } from '../../src/lib/server/auth/users';
import { recordEntryChange } from '../../src/lib/server/entries/changes';
import { readerFor } from '../../src/lib/server/entries/rules';
import { createEntry, transitionEntry } from '../../src/lib/server/entries/service';
import { MatchIndexes, rankTraces } from '../../src/lib/server/match/registry';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { insertTrace, processCapture, processSimulation } from '../../src/lib/server/traces/service';
import { simulate } from '../../src/lib/signature/simulate';
import type { DeviceModel } from '../../src/lib/signature/types';
import { randomStyle, seededRandom, synthesiseSamples, writeCapture } from '../support/captures';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

const db = openTestDb();
const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
let author: MemberContext;
let viewer: MemberContext;
let outsider: MemberContext;
// Two registries stand for two app instances behind a load balancer.
const one = new MatchIndexes(db);
const two = new MatchIndexes(db);

beforeAll(async () => {
	await one.listen(testDatabaseUrl());
	await two.listen(testDatabaseUrl());
});
afterAll(async () => {
	await one.close();
	await two.close();
	await db.destroy();
});

async function member(orgId: string, slug: string, role: 'author' | 'viewer', email: string): Promise<MemberContext> {
	const u = await ensureUser(db, { email, name: email });
	await insertMembership(db, { orgId, userId: u.id, role });
	return { userId: u.id, orgId, orgSlug: slug, orgName: slug, role, via: 'session' };
}

/** A published entry whose fault trace is the simulator's curve of `model`. */
async function entryWith(m: MemberContext, title: string, model: DeviceModel, publish = true): Promise<string> {
	const entry = await createEntry(db, m, entryCreate.parse({ title, componentKind: 'other', symptom: title }));
	await db.transaction().execute(async (trx) => {
		await insertTrace(trx, m.orgId, { entryId: entry.id, role: 'fault', label: '', createdBy: m.userId, processed: processSimulation(model, conditions) });
		await recordEntryChange(trx, m.orgId, entry.id);
	});
	if (publish) await transitionEntry(db, m, entry.id, 'publish', '');
	return entry.id;
}

function queryOf(model: DeviceModel, seed: number) {
	const rng = seededRandom(seed);
	const file = writeCapture(synthesiseSamples(simulate(model, conditions, { points: 4096 }), { rng, noise: 0.01 }), randomStyle(rng));
	return processCapture(new TextEncoder().encode(file.text), traceUpload.parse({ ...conditions, ...file.parseOptions })).curve;
}

async function waitFor(check: () => Promise<boolean>): Promise<void> {
	for (let k = 0; k < 100; k++) {
		if (await check()) return;
		await new Promise((r) => setTimeout(r, 50));
	}
	throw new Error('the other instance never caught up');
}

beforeEach(async () => {
	await truncateAll(db);
	one.clear();
	two.clear();
	const a = (await insertOrg(db, { name: 'A', slug: 'match-a' }))!;
	const b = (await insertOrg(db, { name: 'B', slug: 'match-b' }))!;
	author = await member(a.id, a.slug, 'author', 'author@match-a.example');
	viewer = await member(a.id, a.slug, 'viewer', 'viewer@match-a.example');
	outsider = await member(b.id, b.slug, 'author', 'author@match-b.example');
});

describe('matching a capture against stored traces', () => {
	it('ranks the right entry first, and 2.2 kΩ before its 2.7 kΩ neighbour', async () => {
		const r22 = await entryWith(author, 'R 2.2 kΩ', { kind: 'resistor', ohms: 2200 });
		const r27 = await entryWith(author, 'R 2.7 kΩ', { kind: 'resistor', ohms: 2700 });
		await entryWith(author, 'C 1 µF', { kind: 'capacitor', farads: 1e-6 });
		await entryWith(author, 'diode', { kind: 'diode', is: 2.5e-9, n: 1.75, rs: 0.6 });
		const ranked = await rankTraces(db, one, author.orgId, readerFor(author), queryOf({ kind: 'resistor', ohms: 2200 }, 1), { limit: 10 });
		expect(ranked.map((r) => r.entryId).slice(0, 2)).toEqual([r22, r27]);
		expect(ranked[0].comparison).toMatchObject({ comparable: true });
		expect(ranked[0].comparison.similarity).toBeGreaterThan(ranked[1].comparison.similarity);
	});

	it('shows viewers only published entries and never another organisation’s traces', async () => {
		const draft = await entryWith(author, 'draft R', { kind: 'resistor', ohms: 2200 }, false);
		const q = queryOf({ kind: 'resistor', ohms: 2200 }, 2);
		expect((await rankTraces(db, one, author.orgId, readerFor(author), q, { limit: 5 })).map((r) => r.entryId)).toEqual([draft]);
		expect(await rankTraces(db, one, viewer.orgId, readerFor(viewer), q, { limit: 5 })).toEqual([]);
		expect(await rankTraces(db, one, outsider.orgId, readerFor(outsider), q, { limit: 5 })).toEqual([]);
	});

	it('refreshes the other instance when a trace is added, through Postgres NOTIFY', async () => {
		const q = queryOf({ kind: 'capacitor', farads: 0.47e-6 }, 3);
		expect(await rankTraces(db, two, author.orgId, readerFor(author), q, { limit: 5 })).toEqual([]);
		const id = await entryWith(author, 'C 0.47 µF', { kind: 'capacitor', farads: 0.47e-6 });
		await waitFor(async () => (await rankTraces(db, two, author.orgId, readerFor(author), q, { limit: 5 })).some((r) => r.entryId === id));
	});
});
