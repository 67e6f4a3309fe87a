import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { entryCreate } from '../../src/lib/schemas/entries';
import type { MemberContext } from '../../src/lib/server/auth/member';
import { createEntry } from '../../src/lib/server/entries/service';
import { insertMembership, insertOrg } from '../../src/lib/server/orgs/queries';
import { listEntryTraces } from '../../src/lib/server/traces/service';
import { MODEL_KINDS } from '../../src/lib/traces/simulation';
import { type AppServer, sessionFor, startAppServer } from './support/app-server';
import { openTestDb, testDatabaseUrl, truncateAll } from './setup-db';

/**
 * The simulation picker without JavaScript, over HTTP: the trace page's `?/simulate` action
 * through the real hooks, guard and action, checked against textbook circuit facts, and against
 * the JSON API's `simulate` body (both must store the same trace).
 */
const db = openTestDb();
let app: AppServer;
const SLUG = 'sim-bench';
const who: Record<'author' | 'viewer', { cookie: string; userId: string }> = {} as never;
let orgId: string;
let entryId: string;
const bench = { sourcePeakV: '10', sourceResistanceOhm: '1k', frequencyHz: '60' };

beforeAll(async () => {
	await truncateAll(db);
	app = await startAppServer({ DATABASE_URL: testDatabaseUrl(), AUTH_SECRET: 'trace-simulate-form-secret-long-enough-0123' });
	orgId = (await insertOrg(db, { name: 'Sim bench', slug: SLUG }))!.id;
	for (const role of ['author', 'viewer'] as const) {
		who[role] = await sessionFor(db, `${role}@sim.example`, role);
		await insertMembership(db, { orgId, userId: who[role].userId, role });
	}
}, 120_000);

beforeEach(async () => {
	const author: MemberContext = { userId: who.author.userId, orgId, orgSlug: SLUG, orgName: 'Sim bench', role: 'author', via: 'session' };
	entryId = (await createEntry(db, author, entryCreate.parse({ title: 'Coupling capacitor leaks', componentKind: 'capacitor', symptom: 'Hum on the output' }))).id;
});

afterAll(async () => {
	await app?.stop();
	await db.destroy();
});

const page = () => `/o/${SLUG}/entries/${entryId}/traces/new`;

/** A url-encoded post, as a browser without script sends the picker's form. */
async function postForm(cookie: string, fields: Record<string, string>) {
	const res = await fetch(`${app.url}${page()}?/simulate`, {
		method: 'POST',
		headers: { cookie, origin: app.url, accept: 'text/html', 'content-type': 'application/x-www-form-urlencoded' },
		body: new URLSearchParams(fields),
		redirect: 'manual'
	});
	return { status: res.status, location: res.headers.get('location'), text: await res.text() };
}

async function storedRow(id: string) {
	return db.selectFrom('trace').select(['model', 'canonical', 'descriptor', 'analysis']).where('id', '=', id).executeTakeFirstOrThrow();
}

/** Text as Svelte writes it into the page. */
const html = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/"/g, '&quot;');

const param = (a: { parameters: Record<string, unknown> }, name: string) => {
	const p = a.parameters[name] as { value?: unknown } | undefined;
	return typeof p?.value === 'number' ? p.value : NaN;
};

describe('the simulation form on the trace page', () => {
	it('renders as a plain form with every part the picker offers and the safety caution', async () => {
		const res = await fetch(`${app.url}${page()}`, { headers: { cookie: who.author.cookie } });
		const text = await res.text();
		expect(res.status).toBe(200);
		const picker = text.slice(text.indexOf('data-testid="simulation-picker"'));
		expect(picker).toContain(`action="/o/${SLUG}/entries/${entryId}/traces/new?/simulate"`);
		expect(picker).toContain('data-testid="safety-caution"');
		for (const k of MODEL_KINDS) expect(picker).toContain(`<option value="${k.id}"`);
		expect(picker).toContain('name="ohms"');
		expect(picker).toContain('value="4k7"');
		expect(picker).not.toContain('turn on JavaScript');
	});

	it('shows another part’s fields, keeping what was typed, when chosen without script', async () => {
		const query = new URLSearchParams({ kind: 'leaky-capacitor', farads: '2.2u', sourcePeakV: '5', sourceResistanceOhm: '4k7', frequencyHz: '1k', label: 'C12 leaky' });
		const res = await fetch(`${app.url}${page()}?${query}`, { headers: { cookie: who.author.cookie } });
		const picker = (await res.text()).split('data-testid="simulation-picker"')[1];
		expect(picker).toMatch(/<option value="leaky-capacitor"[^>]*selected/);
		expect(picker).toContain('name="leakageOhms"');
		expect(picker).not.toContain('name="ohms"');
		for (const v of ['2.2u', '5', '4k7', '1k', 'C12 leaky']) expect(picker).toContain(`value="${v}"`);
	});

	it('stores a resistor whose line has the slope R = V/I, as a simulated known-good reference', async () => {
		const res = await postForm(who.author.cookie, { kind: 'resistor', ohms: '4k7', ...bench, label: '' });
		expect(res.status, res.text.slice(0, 300)).toBe(303);
		const traces = await listEntryTraces(db, orgId, entryId);
		expect(traces).toHaveLength(1);
		const t = traces[0];
		expect(res.location).toBe(`${page()}?attached=${t.id}`);
		expect(t).toMatchObject({
			role: 'known-good',
			simulated: true,
			fileName: null,
			class: 'resistive',
			conditions: { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 },
			label: 'Simulated 4.7 kΩ resistor at 10 V · 1 kΩ · 60 Hz'
		});
		const row = await storedRow(t.id);
		expect(row.model).toEqual({ kind: 'resistor', ohms: 4700 });
		// Ohm's law: every point of the stored curve lies on v = R·i, so the least-squares slope is R.
		const { v, i } = row.canonical as { v: number[]; i: number[] };
		const slope = v.reduce((s, x, k) => s + x * i[k], 0) / i.reduce((s, x) => s + x * x, 0);
		expect(slope).toBeGreaterThan(4700 * 0.999);
		expect(slope).toBeLessThan(4700 * 1.001);
		// Voltage divider: the peak across the part is Vs·R/(R + Rs) = 10 · 4.7k/5.7k ≈ 8.25 V.
		expect(Math.max(...v)).toBeCloseTo((10 * 4700) / 5700, 2);
		expect(param(t.analysis, 'resistanceOhm') / 4700).toBeCloseTo(1, 2);

		// The page it returns to says so and lists it; the entry page shows it, marked simulated.
		const back = await (await fetch(`${app.url}${res.location}`, { headers: { cookie: who.author.cookie } })).text();
		expect(back).toContain('data-testid="simulation-attached"');
		expect(back).toContain(html('Attached “Simulated 4.7 kΩ resistor at 10 V · 1 kΩ · 60 Hz” as a simulated known-good reference.'));
		const entryPage = await (await fetch(`${app.url}/o/${SLUG}/entries/${entryId}`, { headers: { cookie: who.author.cookie } })).text();
		expect(entryPage).toContain('Simulated 4.7 kΩ resistor at 10 V · 1 kΩ · 60 Hz');
		expect(entryPage).toContain('>simulated</span>');
	});

	it('stores exactly what the JSON simulate path stores for the same part', async () => {
		const form = await postForm(who.author.cookie, { kind: 'capacitor', farads: '2.2u', ...bench, label: 'C4 reference' });
		expect(form.status).toBe(303);
		const api = await fetch(`${app.url}/api/v1/orgs/${SLUG}/entries/${entryId}/traces`, {
			method: 'POST',
			headers: { cookie: who.author.cookie, origin: app.url, 'content-type': 'application/json' },
			body: JSON.stringify({ sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60, label: 'C4 reference', simulate: { model: { kind: 'capacitor', farads: 2.2e-6 } } })
		});
		expect(api.status).toBe(201);
		const traces = await listEntryTraces(db, orgId, entryId);
		expect(traces).toHaveLength(2);
		const [a, b] = await Promise.all(traces.map((t) => storedRow(t.id)));
		expect(a).toEqual(b);
		const { analysis, ...summaryA } = traces[0];
		const { analysis: analysisB, ...summaryB } = traces[1];
		expect(analysis).toEqual(analysisB);
		expect({ ...summaryA, id: '', createdAt: null }).toEqual({ ...summaryB, id: '', createdAt: null });
	});

	it.each([
		// Xc = 1/(2πfC) = 1/(2π · 60 Hz · 2.2 µF) ≈ 1.21 kΩ against Rs = 1 kΩ; the peak current is
		// Vs/|Rs + 1/(jωC)| = 10 V / 1.567 kΩ ≈ 6.38 mA (series RC, textbook phasors).
		['capacitor', { kind: 'capacitor', farads: '2.2u' }, 'capacitive', { capacitanceF: 2.2e-6 }, 10 / Math.hypot(1000, 1 / (2 * Math.PI * 60 * 2.2e-6))],
		// XL = 2πfL = 2π · 60 Hz · 1 H ≈ 377 Ω in series with the 100 Ω winding: peak current
		// 10 V / |1 kΩ + 100 Ω + j377 Ω| ≈ 8.60 mA.
		['winding', { kind: 'winding', windingHenries: '1', windingOhms: '100' }, 'inductive', { inductanceH: 1, seriesResistanceOhm: 100 }, 10 / Math.hypot(1100, 2 * Math.PI * 60)],
		// 1 µF ∥ 10 kΩ: admittance 1/10k + jωC, so the part's impedance is 10k/(1 + jωRC).
		['capacitor with leakage', { kind: 'leaky-capacitor', farads: '1u', leakageOhms: '10k' }, 'capacitive', { capacitanceF: 1e-6, leakageOhm: 1e4 }, NaN]
	])('reads a simulated %s as the textbook says', async (_name, fields, cls, params, peakCurrent) => {
		const res = await postForm(who.author.cookie, { ...fields, ...bench });
		expect(res.status, res.text.slice(0, 300)).toBe(303);
		const [t] = await listEntryTraces(db, orgId, entryId);
		expect(t.class).toBe(cls);
		for (const [name, value] of Object.entries(params)) expect(param(t.analysis, name) / value, name).toBeCloseTo(1, 2);
		if (Number.isFinite(peakCurrent)) {
			const { i } = (await storedRow(t.id)).canonical as { i: number[] };
			expect(Math.max(...i) / peakCurrent).toBeCloseTo(1, 2);
		}
	});

	it('stores a zener the other way round, with its breakdown where it was typed', async () => {
		const res = await postForm(who.author.cookie, { kind: 'zener', bv: '5.1', seriesOhms: '', reversed: 'on', ...bench });
		expect(res.status).toBe(303);
		const [t] = await listEntryTraces(db, orgId, entryId);
		expect(t.class).toBe('zener');
		expect((t.analysis.parameters.polarity as { value: string }).value).toBe('cathode-at-probe-1');
		expect(param(t.analysis, 'breakdownV')).toBeCloseTo(5.1, 1);
		// A silicon junction conducts forward around 0.5–0.7 V (common practice, no source).
		expect(param(t.analysis, 'kneeV')).toBeGreaterThan(0.5);
		expect(param(t.analysis, 'kneeV')).toBeLessThan(0.75);
		expect((await storedRow(t.id)).model).toEqual({ kind: 'diode', bv: 5.1, reversed: true });
	});

	it.each([
		['an unreadable value', { kind: 'resistor', ohms: '4x7' }, 'ohms', '“4x7” is not a value. Write it like 4k7, 2.2u, 100n or 0.001 (Ω).', '4x7'],
		['a missing value', { kind: 'capacitor', farads: '' }, 'farads', 'Enter the capacitance, for example 1u (F).', null],
		['a value the simulator cannot hold', { kind: 'resistor', ohms: '1000G' }, 'ohms', 'The resistance must be between 1 mΩ and 100 GΩ.', '1000G'],
		['a negative series resistance', { kind: 'diode', seriesOhms: '-1' }, 'seriesOhms', 'The series resistance must be between 0 Ω and 1 MΩ.', '-1'],
		['an unknown part', { kind: 'transistor' }, 'kind', 'Choose the part to simulate from the list.', null],
		['a frequency of zero', { kind: 'short', frequencyHz: '0' }, 'frequencyHz', 'Frequency must be at least 1 Hz.', '0'],
		['too high a source voltage', { kind: 'open', sourcePeakV: '500' }, 'sourcePeakV', 'Source peak voltage must be at most 100 V.', '500'],
		['a source resistance that is not a number', { kind: 'short', sourceResistanceOhm: 'one k' }, 'sourceResistanceOhm', '“one k” is not a value. Write it like 4k7, 2.2u, 100n or 0.001 (Ω).', 'one k'],
		['too long a label', { kind: 'short', label: 'x'.repeat(150) }, 'label', 'Keep the label to 120 characters or fewer.', 'x'.repeat(150)]
	])('refuses %s beside the field, keeps what was typed and stores nothing', async (_name, fields, field, message, kept) => {
		const res = await postForm(who.author.cookie, { ...bench, label: 'kept label', ...fields });
		expect(res.status).toBe(400);
		const picker = res.text.split('data-testid="simulation-picker"')[1];
		expect(picker).toContain('Nothing was attached. Correct the values marked below, then attach again.');
		expect(picker).toMatch(new RegExp(`id="[^"]*-${field}-error"[^>]*>${html(message).replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}<`));
		if (kept) expect(picker).toContain(`value="${html(kept)}"`);
		// The rest of what was typed comes back too.
		if (!('label' in fields)) expect(picker).toContain('value="kept label"');
		if (!('sourceResistanceOhm' in fields)) expect(picker).toContain('value="1k"');
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	});

	it('refuses a body far larger than the form, storing nothing', async () => {
		const res = await postForm(who.author.cookie, { kind: 'short', ...bench, label: 'x'.repeat(40_000) });
		expect(res.status).toBe(413);
		expect(res.text).toContain('The form sent more than a simulation needs.');
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	});

	it('lets a viewer attach nothing', async () => {
		const res = await postForm(who.viewer.cookie, { kind: 'resistor', ohms: '1k', ...bench });
		expect(res.status).toBe(403);
		expect(await listEntryTraces(db, orgId, entryId)).toEqual([]);
	});
});
