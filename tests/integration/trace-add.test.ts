import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { entryCreate } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import { createEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { listEntryTraces } from '../../src/lib/server/traces/service';
import { MAX_BYTES } from '../../src/lib/signature/parse';
import { simulate } from '../../src/lib/signature/simulate';
import { randomStyle, seededRandom, synthesiseSamples, writeCapture } from '../support/captures';
import { type AppServer, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * Adding traces to an entry over HTTP: the no-JavaScript form on /traces/new and the API's
 * simulated references, through the real hooks, guard, actions and endpoints.
 */
const db = openTestDb();
let app: AppServer;
const SLUG = 'trace-bench';
const who: Record<'author' | 'viewer', { cookie: string; userId: string }> = {} as never;
let orgId: string;
let entryId: string;
const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
const conditionFields = { sourcePeakV: '10', sourceResistanceOhm: '1000', frequencyHz: '60' };

beforeAll(async () => {
	await truncateAll(db);
	app = await startAppServer({ DATABASE_URL: testDatabaseUrl(), AUTH_SECRET: 'trace-add-test-secret-long-enough-0123456789' });
	const org = (await insertOrg(db, { name: 'Trace bench', slug: SLUG }))!;
	orgId = org.id;
	for (const role of ['author', 'viewer'] as const) {
		who[role] = await sessionFor(db, `${role}@trace.example`, role);
		await insertMembership(db, { orgId, userId: who[role].userId, role });
	}
}, 120_000);

beforeEach(async () => {
	const author: MemberContext = { userId: who.author.userId, orgId, orgSlug: SLUG, orgName: 'Trace bench', role: 'author', via: 'session' };
	entryId = (await createEntry(db, author, entryCreate.parse({ title: 'Bias resistor drifted', componentKind: 'resistor', symptom: 'Stage biased off' }))).id;
});

afterAll(async () => {
	await app?.stop();
	await db.destroy();
});

/** A bench V-I CSV of a resistor, with noise, written like a tester's export. */
function resistorCsv(ohms: number, seed: number) {
	const rng = seededRandom(seed);
	const curve = simulate({ kind: 'resistor', ohms }, conditions, { points: 4096 });
	const written = writeCapture(synthesiseSamples(curve, { rng, noise: 0.01 }), randomStyle(rng, 'vi-csv'));
	const options = Object.fromEntries(Object.entries(written.parseOptions ?? {}).map(([k, v]) => [k, String(v)]));
	return { text: written.text, options };
}

/** A multipart post as a browser without script sends it (it wants the rendered page back). */
async function postForm(cookie: string, path: string, fields: Record<string, string>, file?: { name: string; body: BlobPart }) {
	const form = new FormData();
	for (const [k, v] of Object.entries(fields)) form.set(k, v);
	if (file) form.set('file', new File([file.body], file.name, { type: 'text/csv' }));
	const res = await fetch(`${app.url}${path}`, { method: 'POST', headers: { cookie, origin: app.url, accept: 'text/html' }, body: form, redirect: 'manual' });
	return { status: res.status, location: res.headers.get('location'), text: await res.text() };
}

async function postJson(cookie: string, path: string, json: unknown) {
	const res = await fetch(`${app.url}${path}`, { method: 'POST', headers: { cookie, origin: app.url, 'content-type': 'application/json' }, body: JSON.stringify(json) });
	return { status: res.status, body: (await res.json()) as Record<string, any> };
}

const page = () => `/o/${SLUG}/entries/${entryId}/traces/new`;
const api = () => `/api/v1/orgs/${SLUG}/entries/${entryId}/traces`;

describe('the no-JavaScript add-trace form', () => {
	it('shows the form to an author, with the safety caution', async () => {
		const res = await fetch(`${app.url}${page()}`, { headers: { cookie: who.author.cookie } });
		const html = await res.text();
		expect(res.status).toBe(200);
		expect(html).toContain('enctype="multipart/form-data"');
		expect(html).toContain('data-testid="safety-caution"');
		expect(html).toContain('name="sourceResistanceOhm"');
	});

	it('stores the capture the server analysed and returns to the editor', async () => {
		// 2.2 kΩ at Rs = 1 kΩ: the slope is R (Ohm's law).
		const csv = resistorCsv(2200, 5);
		const res = await postForm(who.author.cookie, `${page()}?/upload`, { ...conditionFields, ...csv.options, role: 'fault', label: 'R7 as found' }, { name: 'r7.csv', body: csv.text });
		expect(res.status, res.text.slice(0, 300)).toBe(303);
		expect(res.location).toBe(`/o/${SLUG}/entries/${entryId}/edit`);
		const traces = await listEntryTraces(db, orgId, entryId);
		expect(traces).toHaveLength(1);
		expect(traces[0]).toMatchObject({ role: 'fault', label: 'R7 as found', class: 'resistive', fileName: 'r7.csv', simulated: false, conditions });
		const r = traces[0].analysis.parameters.resistanceOhm;
		const value = r && 'value' in r && typeof r.value === 'number' ? r.value : NaN;
		expect(value).toBeGreaterThan(2200 * 0.98);
		expect(value).toBeLessThan(2200 * 1.02);

		// Back in the editor, the list shows the new trace in the page itself (no script needed).
		const editor = await fetch(`${app.url}${res.location}`, { headers: { cookie: who.author.cookie } });
		const html = await editor.text();
		expect(editor.status).toBe(200);
		expect(html).toContain('R7 as found');
		expect(html).toContain('r7.csv');
	});

	it('sends a refused capture back with its plain sentence and the typed fields kept, storing nothing', async () => {
		const rows = ['voltage (V),current (A)', ...Array.from({ length: 40 }, (_, k) => `${Math.sin(k / 3)},${Math.sin(k / 3) / 1000}`)];
		rows[8] = '0.5,1,2';
		const res = await postForm(who.author.cookie, `${page()}?/upload`, { ...conditionFields, frequencyHz: '50', role: 'known-good', label: 'Q3 base' }, { name: 'bad.csv', body: rows.join('\n') });
		expect(res.status).toBe(422);
		expect(res.text).toContain('Line 9: A row has a different number of columns');
		expect(res.text).toContain('value="Q3 base"');
		expect(res.text).toContain('value="50"');
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	});

	it('refuses a file over the size limit, storing nothing', async () => {
		// Past the capture limit and the room left for the form fields around it.
		const big = new Uint8Array(MAX_BYTES + 128 * 1024).fill(0x31);
		const res = await postForm(who.author.cookie, `${page()}?/upload`, { ...conditionFields, role: 'fault' }, { name: 'huge.csv', body: big });
		expect(res.status).toBe(413);
		expect(res.text).toMatch(/larger than 20 MB/);
		const viaApi = await fetch(`${app.url}${api()}`, {
			method: 'POST',
			headers: { cookie: who.author.cookie, origin: app.url },
			body: (() => {
				const f = new FormData();
				for (const [k, v] of Object.entries(conditionFields)) f.set(k, v);
				f.set('file', new File([big], 'huge.csv'));
				return f;
			})()
		});
		expect(viaApi.status).toBe(413);
		expect(((await viaApi.json()) as any).error.code).toBe('too_large');
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	}, 60_000);

	it('lets a viewer add nothing, by the form or the API', async () => {
		const pageRes = await fetch(`${app.url}${page()}`, { headers: { cookie: who.viewer.cookie } });
		expect(pageRes.status).toBe(403);
		const csv = resistorCsv(1000, 8);
		const form = await postForm(who.viewer.cookie, `${page()}?/upload`, { ...conditionFields, ...csv.options }, { name: 'r.csv', body: csv.text });
		expect(form.status).toBe(403);
		const sim = await postJson(who.viewer.cookie, api(), { ...conditions, simulate: { model: { kind: 'resistor', ohms: 1000 } } });
		expect(sim.status).toBe(403);
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	});

	it('deletes one of the entry’s traces', async () => {
		const made = await postJson(who.author.cookie, api(), { ...conditions, simulate: { model: { kind: 'short' } } });
		expect(made.status).toBe(201);
		const res = await postForm(who.author.cookie, `${page()}?/delete`, { traceId: made.body.trace.id });
		expect(res.status).toBe(200);
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	});
});

describe('simulated known-good references through the API', () => {
	it('stores the predicted curve as a simulated known-good trace with no file', async () => {
		// 1 µF at 60 Hz: Xc = 1/(2πfC) ≈ 2.65 kΩ against Rs = 1 kΩ, so the capacitance is measurable.
		const res = await postJson(who.author.cookie, api(), { ...conditions, simulate: { model: { kind: 'capacitor', farads: 1e-6 } } });
		expect(res.status, JSON.stringify(res.body).slice(0, 300)).toBe(201);
		expect(res.body.trace).toMatchObject({ role: 'known-good', simulated: true, file: null, class: 'capacitive' });
		expect(res.body.trace.label).toMatch(/^Simulated 1 µF capacitor/);
		const c = res.body.trace.analysis.parameters.capacitanceF.value;
		expect(c).toBeGreaterThan(1e-6 * 0.98);
		expect(c).toBeLessThan(1e-6 * 1.02);
		const [stored] = await listEntryTraces(db, orgId, entryId);
		expect(stored).toMatchObject({ simulated: true, role: 'known-good', fileName: null });
		const row = await db.selectFrom('trace').select('model').where('id', '=', stored.id).executeTakeFirstOrThrow();
		expect(row.model).toEqual({ kind: 'capacitor', farads: 1e-6 });
	});

	it('refuses a bad model or bad conditions with a stable code, storing nothing', async () => {
		const badModel = await postJson(who.author.cookie, api(), { ...conditions, simulate: { model: { kind: 'resistor', ohms: -5 } } });
		expect(badModel.status).toBe(422);
		expect(badModel.body.error).toMatchObject({ code: 'invalid_model', reason: 'bad_model' });
		const badConditions = await postJson(who.author.cookie, api(), { ...conditions, frequencyHz: 0, simulate: { model: { kind: 'short' } } });
		expect(badConditions.status).toBe(400);
		expect(badConditions.body.error.code).toBe('invalid_input');
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	});

	it('still takes JSON captures without "simulate"', async () => {
		const n = 400;
		const v: number[] = [];
		const i: number[] = [];
		for (let k = 0; k < n; k++) {
			const e = 10 * Math.sin((2 * Math.PI * 4 * k) / n);
			i.push(e / 2000);
			v.push(e / 2);
		}
		// 1 kΩ against Rs = 1 kΩ: half the source across the part (voltage divider).
		const res = await postJson(who.author.cookie, api(), { ...conditions, capture: { v, i }, role: 'other' });
		expect(res.status).toBe(201);
		expect(res.body.trace).toMatchObject({ role: 'other', simulated: false, class: 'resistive' });
	});
});
