import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { simulate } from '../../src/lib/signature/simulate';
import { randomStyle, seededRandom, synthesiseSamples, writeCapture } from '../support/captures';
import { type AppServer, call, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * The entries API end to end over HTTP, through the real hooks, guard and endpoints: what a bench
 * PC's script does with a token, and what the forms do under it.
 */
const db = openTestDb();
let app: AppServer;
const who: Record<'author' | 'contributor' | 'viewer', { cookie: string; userId: string }> = {} as never;
const SLUG = 'api-bench';
const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

beforeAll(async () => {
	await truncateAll(db);
	app = await startAppServer({ DATABASE_URL: testDatabaseUrl(), AUTH_SECRET: 'entries-api-test-secret-long-enough-0123456789' });
	const org = (await insertOrg(db, { name: 'API bench', slug: SLUG }))!;
	for (const role of ['author', 'contributor', 'viewer'] as const) {
		who[role] = await sessionFor(db, `${role}@api.example`, role);
		await insertMembership(db, { orgId: org.id, userId: who[role].userId, role });
	}
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await db.destroy();
});

const base = `/api/v1/orgs/${SLUG}`;

async function upload(cookie: string, entryId: string, text: string, fields: Record<string, string>) {
	const form = new FormData();
	form.set('file', new File([text], 'capture.csv', { type: 'text/csv' }));
	for (const [k, v] of Object.entries(fields)) form.set(k, v);
	const res = await fetch(`${app.url}${base}/entries/${entryId}/traces`, { method: 'POST', headers: { cookie, origin: app.url }, body: form });
	return { status: res.status, body: (await res.json()) as Record<string, any> };
}

describe('entries API', () => {
	it('creates a draft, takes a capture, and walks it through review to publication', async () => {
		const created = await call(app, who.contributor, 'POST', `${base}/entries`, {
			json: { title: 'Feedback divider R8 high', componentKind: 'resistor', symptom: 'Output regulates high', tags: ['divider'] }
		});
		expect(created.status).toBe(201);
		const entry = (created.json() as any).entry;
		expect(entry).toMatchObject({ status: 'draft', version: 1, tags: ['divider'] });

		// 2.2 kΩ at Rs = 1 kΩ, as a bench CSV: the server re-analyses it (Ohm's law: slope R).
		const rng = seededRandom(11);
		const curve = simulate({ kind: 'resistor', ohms: 2200 }, conditions, { points: 4096 });
		const file = writeCapture(synthesiseSamples(curve, { rng, noise: 0.01 }), randomStyle(rng, 'vi-csv'));
		const up = await upload(who.contributor.cookie, entry.id, file.text, { ...Object.fromEntries(Object.entries(conditions).map(([k, v]) => [k, String(v)])), role: 'fault', label: 'as found' });
		expect(up.status).toBe(201);
		expect(up.body.trace).toMatchObject({ class: 'resistive', role: 'fault', file: { name: 'capture.csv' } });
		expect(up.body.trace.analysis.parameters.resistanceOhm.value).toBeGreaterThan(2200 * 0.98);
		expect(up.body.trace.analysis.parameters.resistanceOhm.value).toBeLessThan(2200 * 1.02);

		// A viewer cannot see the draft at all.
		expect((await call(app, who.viewer, 'GET', `${base}/entries/${entry.id}`)).status).toBe(404);

		expect((await call(app, who.contributor, 'POST', `${base}/entries/${entry.id}/transitions`, { json: { action: 'submit' } })).status).toBe(200);
		const refused = await call(app, who.contributor, 'POST', `${base}/entries/${entry.id}/transitions`, { json: { action: 'publish' } });
		expect(refused.status).toBe(403);
		expect((refused.json() as any).error.code).toBe('forbidden');
		const published = await call(app, who.author, 'POST', `${base}/entries/${entry.id}/transitions`, { json: { action: 'publish' } });
		expect((published.json() as any).entry.status).toBe('published');

		const seen = await call(app, who.viewer, 'GET', `${base}/entries/${entry.id}`);
		expect(seen.status).toBe(200);
		expect((seen.json() as any).traces).toHaveLength(1);
		const traceId = up.body.trace.id;
		const canonical = (await call(app, who.viewer, 'GET', `${base}/traces/${traceId}?view=canonical`)).json() as any;
		expect(canonical.canonical.v).toHaveLength(256);
		const raw = await call(app, who.viewer, 'GET', `${base}/traces/${traceId}?view=raw`);
		expect(raw.text).toBe(file.text);
	}, 60_000);

	it('answers a stale save with 409 and both versions, and saves nothing', async () => {
		const created = (await call(app, who.author, 'POST', `${base}/entries`, { json: { title: 'Two editors', componentKind: 'other', symptom: 'x' } })).json() as any;
		const id = created.entry.id;
		expect((await call(app, who.author, 'PATCH', `${base}/entries/${id}`, { json: { version: 1, symptom: 'first' } })).status).toBe(200);
		const stale = await call(app, who.author, 'PATCH', `${base}/entries/${id}`, { json: { version: 1, symptom: 'second' } });
		expect(stale.status).toBe(409);
		expect(stale.json()).toMatchObject({ error: { code: 'conflict' }, current: { version: 2, symptom: 'first' }, yours: { symptom: 'second' } });
		const revisions = (await call(app, who.author, 'GET', `${base}/entries/${id}/revisions`)).json() as any;
		expect(revisions.revisions.map((r: any) => r.version)).toEqual([2, 1]);
	});

	it('refuses bad input with stable codes: fields, captures the engine rejects, oversized uploads', async () => {
		const bad = await call(app, who.author, 'POST', `${base}/entries`, { json: { title: '', componentKind: 'flux', symptom: 'x'.repeat(300) } });
		expect(bad.status).toBe(400);
		expect((bad.json() as any).error.issues.map((i: any) => i.path).sort()).toEqual(['componentKind', 'symptom', 'title']);

		const entry = ((await call(app, who.author, 'POST', `${base}/entries`, { json: { title: 'Uploads', componentKind: 'other', symptom: 'x' } })).json() as any).entry;
		const fields = { sourcePeakV: '10', sourceResistanceOhm: '1000', frequencyHz: '60' };
		const tooFew = await upload(who.author.cookie, entry.id, 'v,i\n1,2\n3,4\n', fields);
		expect(tooFew.status).toBe(422);
		expect(tooFew.body.error).toMatchObject({ code: 'invalid_capture', reason: 'too_few_samples' });
		const noConditions = await upload(who.author.cookie, entry.id, 'v,i\n1,2\n', { sourcePeakV: '500' });
		expect(noConditions.status).toBe(400);
		const huge = await upload(who.author.cookie, entry.id, 'x'.repeat(21 * 1024 * 1024), fields);
		expect(huge.status).toBe(413);
		expect(huge.body.error.code).toBe('too_large');
		expect(((await call(app, who.author, 'GET', `${base}/entries/${entry.id}/traces`)).json() as any).traces).toEqual([]);
	}, 60_000);

	it('matches a capture against published traces: the right entry first, its neighbour next', async () => {
		const publish = async (title: string, ohms: number) => {
			const e = ((await call(app, who.author, 'POST', `${base}/entries`, { json: { title, componentKind: 'resistor', symptom: title } })).json() as any).entry;
			const rng = seededRandom(ohms);
			const curve = simulate({ kind: 'resistor', ohms }, conditions, { points: 4096 });
			const file = writeCapture(synthesiseSamples(curve, { rng, noise: 0.005 }), randomStyle(rng, 'vi-csv'));
			const fields = Object.fromEntries(Object.entries({ ...conditions, ...file.parseOptions }).map(([k, v]) => [k, String(v)]));
			expect((await upload(who.author.cookie, e.id, file.text, fields)).status).toBe(201);
			await call(app, who.author, 'POST', `${base}/entries/${e.id}/transitions`, { json: { action: 'publish' } });
			return e.id as string;
		};
		const r3k3 = await publish('Match 3.3 kΩ', 3300);
		const r3k9 = await publish('Match 3.9 kΩ', 3900);
		const rng = seededRandom(99);
		const query = synthesiseSamples(simulate({ kind: 'resistor', ohms: 3300 }, conditions, { points: 4096 }), { rng, noise: 0.01 });
		const res = await call(app, who.viewer, 'POST', `${base}/matches?limit=5`, { json: { capture: { v: query.v, i: query.i }, ...conditions } });
		expect(res.status).toBe(200);
		const body = res.json() as any;
		expect(body.capture.analysis.class).toBe('resistive');
		const ids = body.matches.map((m: any) => m.entry.id);
		expect(ids.indexOf(r3k3)).toBe(0);
		expect(ids.indexOf(r3k9)).toBeGreaterThan(0);
		expect(body.matches[0]).toMatchObject({ comparable: true, trace: { canonical: { v: expect.any(Array) } } });
		expect(body.matches[0].similarity).toBeGreaterThan(body.matches[ids.indexOf(r3k9)].similarity);
		// Different conditions (50 Hz is 20 % off 60 Hz): still ranked, but marked not comparable.
		const other = (await call(app, who.viewer, 'POST', `${base}/matches`, { json: { capture: { v: query.v, i: query.i }, ...conditions, frequencyHz: 50 } })).json() as any;
		expect(other.matches.every((m: any) => m.comparable === false)).toBe(true);
	}, 60_000);

	it('lets a viewer read but not write', async () => {
		expect((await call(app, who.viewer, 'POST', `${base}/entries`, { json: { title: 't', componentKind: 'other', symptom: 's' } })).status).toBe(403);
		expect((await call(app, who.viewer, 'GET', `${base}/entries`)).status).toBe(200);
	});
});
