import http from 'node:http';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { entryCreate } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import { recordEntryChange } from '../../src/lib/server/entries/changes';
import { createEntry, transitionEntry } from '../../src/lib/server/entries/service';
import { createOrganisation } from '../../src/lib/server/orgs/members';
import { insertMembership } from '../../src/lib/server/orgs/queries';
import { insertTrace, processSimulation } from '../../src/lib/server/traces/service';
import { MAX_BYTES } from '../../src/lib/signature/parse';
import { simulate } from '../../src/lib/signature/simulate';
import type { DeviceModel, TestConditions } from '../../src/lib/signature/types';
import { seededRandom, synthesiseSamples } from '../support/captures';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';
import { type AppServer, call, type Caller, sessionFor } from './support/app-server';
import { startAppServer } from './support/app-server';

/**
 * The match page's form actions on the real app (vite dev against the test database), posted as a
 * browser without script posts them: the page comes back rendered with the result cards.
 */
const db = openTestDb();
let app: AppServer;
const A = 'match-alpha';
const B = 'match-bravo';
const EMPTY = 'match-empty';
let orgA: string;
let orgB: string;
const who = {} as Record<'author' | 'viewer' | 'contributor' | 'other' | 'outsider', Caller & { userId: string }>;
const MID: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
const LEAKY_CAP: DeviceModel = { kind: 'parallel', parts: [{ kind: 'capacitor', farads: 4.7e-6 }, { kind: 'resistor', ohms: 2200 }] };

function ctx(userId: string, orgId: string, slug: string): MemberContext {
	return { userId, orgId, orgSlug: slug, orgName: slug, role: 'author', via: 'session' };
}

async function publishedEntry(m: MemberContext, title: string, model: DeviceModel): Promise<string> {
	const entry = await createEntry(db, m, entryCreate.parse({ title, componentKind: 'other', symptom: `${title} symptom`, fix: `Replace **the part** of ${title}.` }));
	await db.transaction().execute(async (trx) => {
		await insertTrace(trx, m.orgId, { entryId: entry.id, role: 'fault', label: '', createdBy: m.userId, processed: processSimulation(model, MID) });
		await recordEntryChange(trx, m.orgId, entry.id);
	});
	await transitionEntry(db, m, entry.id, 'publish', '');
	return entry.id;
}

/** A bench CSV of `model` (1 % noise, 3 periods, time in seconds, current in mA). */
function benchCsv(model: DeviceModel, c: TestConditions = MID, seed = 3): string {
	const s = synthesiseSamples(simulate(model, c, { points: 4096 }), { rng: seededRandom(seed), noise: 0.01, samplesPerPeriod: 500, periods: 3 });
	const rows = s.v.map((v, k) => `${s.t[k].toExponential(6)},${v.toPrecision(6)},${(s.i[k] * 1e3).toPrecision(6)}`);
	return ['time_s,voltage_V,current_mA', ...rows].join('\n');
}

const form = (csv: string, c: TestConditions = MID, extra: Record<string, string> = {}) => ({
	csv,
	sourcePeakV: String(c.sourcePeakV),
	sourceResistanceOhm: String(c.sourceResistanceOhm),
	frequencyHz: String(c.frequencyHz),
	...extra
});

/** Result card titles in page order. */
function cardTitles(html: string): string[] {
	return [...html.matchAll(/data-testid="match-title"[^>]*>([^<]*)</g)].map((m) => m[1]);
}

/** The value attribute the page renders into a condition field. */
function fieldValue(html: string, name: string): string | undefined {
	const tag = html.match(new RegExp(`<input[^>]*name="${name}"[^>]*>`))?.[0];
	return tag?.match(/value="([^"]*)"/)?.[1];
}

beforeAll(async () => {
	await truncateAll(db);
	app = await startAppServer({ DATABASE_URL: testDatabaseUrl(), AUTH_SECRET: 'match-page-test-secret-that-is-long-enough-0123' });
	for (const k of Object.keys({ author: 0, viewer: 0, contributor: 0, other: 0, outsider: 0 }) as (keyof typeof who)[]) {
		who[k] = await sessionFor(db, `${k}@match.example`, k);
	}
	orgA = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Alpha', slug: A, creatorId: who.author.userId })))!.id;
	orgB = (await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Bravo', slug: B, creatorId: who.outsider.userId })))!.id;
	await db.transaction().execute((trx) => createOrganisation(trx, { name: 'Empty', slug: EMPTY, creatorId: who.author.userId }));
	await insertMembership(db, { orgId: orgA, userId: who.viewer.userId, role: 'viewer' });
	await insertMembership(db, { orgId: orgA, userId: who.contributor.userId, role: 'contributor' });
	await insertMembership(db, { orgId: orgA, userId: who.other.userId, role: 'viewer' });
	// The viewer is a member of B too, to show preferences are kept per organisation.
	await insertMembership(db, { orgId: orgB, userId: who.viewer.userId, role: 'viewer' });

	const a = ctx(who.author.userId, orgA, A);
	await publishedEntry(a, 'Leaky electrolytic', LEAKY_CAP);
	await publishedEntry(a, 'Pull-up drifted to 4.7 kΩ', { kind: 'resistor', ohms: 4700 });
	await publishedEntry(a, 'Clamp diode', { kind: 'diode', is: 2.5e-9, n: 1.75, rs: 0.6 });
	// Org B holds the very same leaky capacitor: it must never show up in A's results.
	await publishedEntry(ctx(who.outsider.userId, orgB, B), 'Bravo secret leaky cap', LEAKY_CAP);
	await call(app, who.author, 'GET', `/o/${A}/match`);
}, 120_000);

afterAll(async () => {
	await app?.stop();
	await db.destroy();
});

describe('the match page', () => {
	it('lets a viewer match a pasted capture and shows the matching entry first, with its plot and fix, without script', async () => {
		const res = await call(app, who.viewer, 'POST', `/o/${A}/match?/match`, form(benchCsv(LEAKY_CAP)));
		expect(res.status).toBe(200);
		const titles = cardTitles(res.text);
		expect(titles[0]).toBe('Leaky electrolytic');
		expect(titles).not.toContain('Bravo secret leaky cap');
		expect(res.text).toContain('data-testid="static-plot"');
		// The fix is shown as plain text, Markdown stripped.
		expect(res.text).toContain('Replace the part of Leaky electrolytic.');
		expect(res.text).toMatch(/href="\/o\/match-alpha\/entries\/[0-9a-f-]{36}"/);
		// The server's own reading of the capture (phasor fit: a leaky capacitor reads capacitive).
		expect(res.text).toContain('capacitive');
	});

	it('warns on every card when the stored traces were taken under other conditions', async () => {
		const other = { sourcePeakV: 20, sourceResistanceOhm: 10_000, frequencyHz: 60 };
		const res = await call(app, who.viewer, 'POST', `/o/${A}/match?/match`, form(benchCsv(LEAKY_CAP, other), other));
		expect(res.status).toBe(200);
		const cards = res.text.split('data-testid="match-card"').length - 1;
		expect(cards).toBeGreaterThan(0);
		expect(res.text.split('data-testid="not-comparable"').length - 1).toBe(cards);
	});

	it('explains an unreadable capture beside the input and keeps what was typed', async () => {
		const res = await call(app, who.viewer, 'POST', `/o/${A}/match?/match`, form('voltage,current\nabc,def\n', { sourcePeakV: 12, sourceResistanceOhm: 470, frequencyHz: 50 }));
		expect(res.status).toBe(422);
		expect(res.text).toMatch(/data-testid="capture-error"[^>]*>[^<]+</);
		expect(fieldValue(res.text, 'sourcePeakV')).toBe('12');
	});

	it('refuses conditions outside the tester limits with the field named', async () => {
		const res = await call(app, who.viewer, 'POST', `/o/${A}/match?/match`, form(benchCsv(LEAKY_CAP), { ...MID, sourcePeakV: 500 }));
		expect(res.status).toBe(400);
		expect(res.text).toContain('Source peak voltage must be at most 100 V.');
	});

	it('says so when nothing the filters allow matches', async () => {
		const res = await call(app, who.viewer, 'POST', `/o/${A}/match?/match`, form(benchCsv(LEAKY_CAP), MID, { componentKind: 'zener' }));
		expect(res.status).toBe(200);
		expect(res.text).toContain('data-testid="no-match"');
		expect(cardTitles(res.text)).toEqual([]);
	});

	it('shows the empty state in an organisation that has no traces yet', async () => {
		const page = await call(app, who.author, 'GET', `/o/${EMPTY}/match`);
		expect(page.status).toBe(200);
		expect(page.text).toContain('data-testid="no-traces"');
		expect((await call(app, who.author, 'GET', `/o/${A}/match`)).text).not.toContain('data-testid="no-traces"');
	});

	it("never ranks or reveals another organisation's entries, and answers an outsider 404", async () => {
		const res = await call(app, who.outsider, 'POST', `/o/${A}/match?/match`, form(benchCsv(LEAKY_CAP)));
		expect(res.status).toBe(404);
		const own = await call(app, who.outsider, 'POST', `/o/${B}/match?/match`, form(benchCsv(LEAKY_CAP)));
		expect(cardTitles(own.text)).toEqual(['Bravo secret leaky cap']);
	});
});

describe('remembered test conditions', () => {
	it('prefills the conditions a member last matched with, for that member and organisation only', async () => {
		const mine = { sourcePeakV: 8.9, sourceResistanceOhm: 4700, frequencyHz: 50 };
		expect((await call(app, who.viewer, 'POST', `/o/${A}/match?/match`, form(benchCsv(LEAKY_CAP, mine), mine))).status).toBe(200);

		const again = await call(app, who.viewer, 'GET', `/o/${A}/match`);
		expect([fieldValue(again.text, 'sourcePeakV'), fieldValue(again.text, 'sourceResistanceOhm'), fieldValue(again.text, 'frequencyHz')]).toEqual(['8.9', '4700', '50']);
		// Another member of the same organisation keeps the defaults…
		const someoneElse = await call(app, who.other, 'GET', `/o/${A}/match`);
		expect(fieldValue(someoneElse.text, 'sourcePeakV')).toBe('10');
		// …and so does the same member in another organisation.
		const elsewhere = await call(app, who.viewer, 'GET', `/o/${B}/match`);
		expect(fieldValue(elsewhere.text, 'sourceResistanceOhm')).toBe('1000');
		const rows = await db.selectFrom('matchPreference').select(['orgId', 'userId', 'sourcePeakV']).where('userId', '=', who.viewer.userId).execute();
		expect(rows).toEqual([{ orgId: orgA, userId: who.viewer.userId, sourcePeakV: 8.9 }]);
	});

	it('does not remember conditions from a refused submit', async () => {
		await call(app, who.other, 'POST', `/o/${A}/match?/match`, form('not a capture', { sourcePeakV: 3, sourceResistanceOhm: 100, frequencyHz: 60 }));
		const rows = await db.selectFrom('matchPreference').selectAll().where('userId', '=', who.other.userId).execute();
		expect(rows).toEqual([]);
	});
});

describe('writing a new entry from a capture', () => {
	it('refuses a viewer (403) and writes nothing', async () => {
		const count = async () => (await db.selectFrom('entry').select('id').where('orgId', '=', orgA).execute()).length;
		const before = await count();
		const res = await call(app, who.viewer, 'POST', `/o/${A}/match?/draft`, form(benchCsv(LEAKY_CAP)));
		expect(res.status).toBe(403);
		expect(await count()).toBe(before);
	});

	it("lets a contributor turn the capture into a draft with the capture as its fault trace, and opens the editor", async () => {
		const res = await call(app, who.contributor, 'POST', `/o/${A}/match?/draft`, form(benchCsv(LEAKY_CAP)));
		expect(res.status).toBe(303);
		const id = res.location?.match(/^\/o\/match-alpha\/entries\/([0-9a-f-]{36})\/edit$/)?.[1];
		expect(id, res.location ?? '').toBeDefined();
		const entry = await db.selectFrom('entry').select(['status', 'symptom', 'title', 'authorId']).where('id', '=', id!).executeTakeFirstOrThrow();
		expect(entry).toEqual({ status: 'draft', symptom: '', title: 'Unknown signature — capacitive at 10 V · 1 kΩ · 60 Hz', authorId: who.contributor.userId });
		const traces = await db.selectFrom('trace').select(['role', 'fileName']).where('entryId', '=', id!).execute();
		expect(traces).toEqual([{ role: 'fault', fileName: 'pasted.csv' }]);
	});
});

describe('oversized captures', () => {
	const big = () => new Blob([new Uint8Array(MAX_BYTES + 1024).fill(0x31)]);

	async function post(body: BodyInit, headers: Record<string, string> = {}) {
		return fetch(`${app.url}/o/${A}/match?/match`, {
			method: 'POST',
			headers: { origin: app.url, cookie: who.viewer.cookie!, accept: 'text/html', ...headers },
			body,
			duplex: 'half'
		} as RequestInit);
	}

	it('refuses a file over the limit with 413 and says so on the page', async () => {
		const fd = new FormData();
		fd.set('file', big(), 'huge.csv');
		for (const [k, v] of Object.entries(form(''))) fd.set(k, v);
		const res = await post(fd);
		expect(res.status).toBe(413);
		expect(await res.text()).toContain('larger than 20 MB');
	});

	it('refuses it while streaming when the size is not declared up front', async () => {
		// A chunked upload (no content-length): the server must stop reading once past the limit.
		const boundary = 'matchtestboundary';
		const url = new URL(`${app.url}/o/${A}/match?/match`);
		const chunk = Buffer.alloc(1024 * 1024, 0x31);
		let sent = 0;
		const status = await new Promise<number>((resolve, reject) => {
			const req = http.request(
				{
					host: '127.0.0.1',
					port: url.port,
					path: url.pathname + url.search,
					method: 'POST',
					headers: { origin: app.url, cookie: who.viewer.cookie!, accept: 'text/html', 'content-type': `multipart/form-data; boundary=${boundary}`, 'transfer-encoding': 'chunked' }
				},
				(res) => {
					res.resume();
					resolve(res.statusCode ?? 0);
				}
			);
			// The server may cut the connection instead of answering: it stopped reading, which is the point.
			req.on('error', (e) => (sent > MAX_BYTES ? resolve(0) : reject(e)));
			req.write(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="huge.csv"\r\nContent-Type: text/csv\r\n\r\n`);
			const pump = () => {
				// Far more than the limit if nobody stops reading.
				while (sent < 3 * MAX_BYTES && !req.destroyed) {
					sent += chunk.byteLength;
					if (!req.write(chunk)) return void req.once('drain', pump);
				}
				req.end();
			};
			pump();
		});
		expect([0, 413]).toContain(status);
		expect(sent).toBeGreaterThan(MAX_BYTES);
		expect(sent).toBeLessThan(3 * MAX_BYTES);
	});
});
