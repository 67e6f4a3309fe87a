/**
 * Search benchmark: SEARCH_BENCH_SIZE synthetic entries (default 100 000, spread over 20
 * organisations) indexed into the local stand-in through the app's search module, then the same
 * symptom queries run two ways, in this one run:
 *   (a) through the module (`runEntrySearch`: the HTTP call to the engine, organisation and
 *       visibility filters, facet counts, safe highlights), as the search endpoint runs it;
 *   (b) a plain `ILIKE` scan in Postgres over the same rows (a scratch table in the *_test
 *       database): every query word must appear somewhere in the entry's text, newest first.
 * (b) is the baseline an app without a search engine would have; it knows no typos or synonyms,
 * so it also finds less. Printed: indexing throughput, p50/p95 of each, and their ratio.
 *
 * With MEILISEARCH_URL (and MEILISEARCH_KEY) set, (a) runs against that engine instead of the
 * stand-in, in a scratch index deleted afterwards.
 *
 * Quick run: `SEARCH_BENCH_SIZE=5000 npm run bench -- search`. Needs TEST_DATABASE_URL or
 * DATABASE_URL naming a database whose name contains "test" (the scratch table is dropped after).
 */
import { randomBytes } from 'node:crypto';
import { sql } from 'kysely';
import { startStandin } from '../../search/standin/server';
import { popularityOf, type EntryDocument } from '../../search/settings';
import { searchQuery } from '../../src/lib/schemas/search';
import { createDb } from '../../src/lib/server/db/connect';
import { createSearchEngine, ensureIndex, indexDocuments } from '../../src/lib/server/search/engine';
import { runEntrySearch } from '../../src/lib/server/search/entry-search';

export const name = 'search';

const SIZE = Number(process.env.SEARCH_BENCH_SIZE ?? 100_000);
const ORGS = 20;
const BATCH = 2_000;
const QUERIES = 60;

function rng(seed: number) {
	let s = seed >>> 0;
	return () => ((s = (s * 1664525 + 1013904223) >>> 0) / 2 ** 32);
}

// Invented vocabulary of a repair depot's write-ups (demo-style; no real parts makers).
const KINDS = ['capacitor', 'electrolytic', 'resistor', 'diode', 'zener', 'inductor', 'ic-pin', 'transistor-junction', 'connector', 'other'];
const PARTS = ['bootstrap capacitor', 'gate resistor', 'bus capacitor', 'reference zener', 'clamp diode', 'output choke', 'pull-up resistor', 'driver pin', 'sense resistor', 'opto LED', 'bridge rectifier', 'snubber network', 'relay coil', 'base-emitter junction'];
const FAULTS = ['leaky', 'shorted', 'open', 'drifted high', 'cracked', 'dried out', 'fitted backwards', 'wrong value', 'soft knee', 'breaks down early'];
const PLACES = ['on the gate driver', 'on the 12 V rail', 'across the DC bus', 'at the feedback net', 'beside the heatsink', 'under the connector', 'on the controller', 'at the input stage'];
const SYMPTOMS = ['ellipse tilted like a resistor', 'flat line where a slope should be', 'vertical line: dead short', 'knee too soft with a slope before it', 'second knee too early', 'ellipse too round and too small', 'slope much flatter than the reference', 'no continuity through the part', 'reads short but the ohmmeter says 40 ohms', 'two knees with a slope between them'];
const CAUSES = ['heat from the regulator', 'overvoltage during braking', 'board flex at the connector', 'ESD through the test header', 'a wrong reel at the last repair', 'electrolyte dried out', 'vibration fractured the lead', 'moisture under the coating'];
const ASSEMBLIES = ['MD-440 motor drive', 'PS-12 bench supply', 'GD-7 gate-driver board', 'CTL-3 controller', 'FX-9 fan controller'];
const TAGS = ['leaky', 'dead-short', 'no-continuity', 'wrong-part', 'heat', 'esd', 'rework', 'mains', 'e-cap', 'gate-drive', 'dc-bus', 'corrosion'];
const CLASSES = ['open', 'short', 'resistive', 'capacitive', 'inductive', 'junction', 'zener', 'complex'];

const pick = <T>(r: () => number, xs: readonly T[]) => xs[Math.floor(r() * xs.length)];
const orgId = (k: number) => `00000000-0000-4000-8000-${String(k).padStart(12, '0')}`;

function syntheticEntry(n: number): EntryDocument {
	const r = rng(n * 7919 + 17);
	const part = pick(r, PARTS);
	const fault = pick(r, FAULTS);
	const place = pick(r, PLACES);
	const symptom = pick(r, SYMPTOMS);
	const cause = pick(r, CAUSES);
	const views = Math.floor(r() * 300);
	const helped = Math.floor(r() * 12);
	const updatedAt = 1_700_000_000_000 + Math.floor(r() * 3e10);
	return {
		id: `e${n}`,
		orgId: orgId(n % ORGS),
		status: r() < 0.85 ? 'published' : 'draft',
		authorId: `u${n % 97}`,
		componentKind: pick(r, KINDS),
		class: pick(r, CLASSES),
		tags: [pick(r, TAGS), pick(r, TAGS)].filter((t, i, a) => a.indexOf(t) === i),
		assembly: pick(r, ASSEMBLIES),
		partNumber: `P${(n * 37) % 9973}`,
		title: `${fault[0].toUpperCase()}${fault.slice(1)} ${part} ${place} (#${n})`,
		symptom: `${symptom[0].toUpperCase()}${symptom.slice(1)}`,
		cause: `${cause[0].toUpperCase()}${cause.slice(1)}; found on unit ${n % 500}.`,
		fix: `Replace the ${part} and check its neighbours.`,
		body: `Probed with the board unpowered and discharged. ${symptom}. Compared with a known-good board: ${part} ${fault} ${place}. ${cause}.`,
		traceClasses: [],
		createdAt: updatedAt - 86_400_000,
		updatedAt,
		publishedAt: updatedAt,
		views,
		helpedCount: helped,
		popularity: popularityOf(views, helped)
	};
}

/** What technicians type, some with a typo. */
function queries(): string[] {
	const r = rng(4242);
	const typo = (w: string) => (w.length > 5 ? w.slice(0, 2) + w.slice(3) : w);
	return Array.from({ length: QUERIES }, (_, k) => {
		const words = [pick(r, FAULTS).split(' ')[0], pick(r, PARTS).split(' ').pop()!];
		if (k % 3 === 0) words.push(pick(r, PLACES).split(' ').pop()!);
		if (k % 4 === 0) words[1] = typo(words[1]);
		return words.join(' ');
	});
}

function percentile(xs: number[], p: number): number {
	const s = [...xs].sort((a, b) => a - b);
	return s[Math.min(s.length - 1, Math.floor(p * s.length))];
}
/** Above 1: the module is faster than the scan by that factor. */
const ratio = (r: number) => (r >= 1 ? `${r.toFixed(1)}× (module faster)` : `1/${(1 / r).toFixed(1)} (module slower)`);
const fmtMs = (ms: number) => (ms < 1 ? `${(ms * 1000).toFixed(0)} µs` : `${ms.toFixed(2)} ms`);

export async function run(): Promise<void> {
	const url = process.env.TEST_DATABASE_URL ?? process.env.DATABASE_URL;
	if (!url || !/test/.test(new URL(url).pathname)) {
		console.log('Skipped: set TEST_DATABASE_URL (or DATABASE_URL) to a database whose name contains "test" for the ILIKE baseline.');
		return;
	}
	// A real engine when one is configured (the scale path); otherwise the local stand-in, in process.
	const external = process.env.MEILISEARCH_URL;
	const key = external ? process.env.MEILISEARCH_KEY || undefined : randomBytes(12).toString('hex');
	const standin = external ? undefined : await startStandin({ masterKey: key });
	const engine = createSearchEngine({ url: external ?? standin!.url, key, index: `bench_${randomBytes(4).toString('hex')}`, timeout: 120_000 });
	const db = createDb(url, { max: 2 });
	const table = 'bench_search_entry';
	try {
		await ensureIndex(engine);
		await sql`drop table if exists ${sql.table(table)}`.execute(db);
		await sql`create unlogged table ${sql.table(table)} (
			id text primary key, org_id uuid not null, status text not null, author_id text,
			title text not null, symptom text not null, cause text not null, fix text not null, body text not null,
			tags text[] not null, assembly text, part_number text, updated_at timestamptz not null)`.execute(db);

		let indexMs = 0;
		let pgMs = 0;
		for (let start = 0; start < SIZE; start += BATCH) {
			const docs = Array.from({ length: Math.min(BATCH, SIZE - start) }, (_, k) => syntheticEntry(start + k));
			const t0 = performance.now();
			await indexDocuments(engine, docs);
			indexMs += performance.now() - t0;
			const t1 = performance.now();
			const col = <K extends keyof EntryDocument>(k: K) => docs.map((d) => d[k]);
			await sql`insert into ${sql.table(table)} (id, org_id, status, author_id, title, symptom, cause, fix, body, tags, assembly, part_number, updated_at)
				select id, org_id::uuid, status, author_id, title, symptom, cause, fix, body, string_to_array(tags, '|'), assembly, part_number, to_timestamp(updated_at / 1000.0)
				from unnest(${col('id')}::text[], ${col('orgId')}::text[], ${col('status')}::text[], ${col('authorId')}::text[], ${col('title')}::text[],
					${col('symptom')}::text[], ${col('cause')}::text[], ${col('fix')}::text[], ${col('body')}::text[], ${docs.map((d) => d.tags.join('|'))}::text[],
					${col('assembly')}::text[], ${col('partNumber')}::text[], ${col('updatedAt')}::float8[])
				as t(id, org_id, status, author_id, title, symptom, cause, fix, body, tags, assembly, part_number, updated_at)`.execute(db);
			pgMs += performance.now() - t1;
			if (process.stdout.isTTY) process.stdout.write(`\r  indexing ${Math.min(SIZE, start + BATCH).toLocaleString('en')} / ${SIZE.toLocaleString('en')}`);
		}
		if (process.stdout.isTTY) process.stdout.write('\n');
		// The baseline gets the index a real table would have: organisation first.
		await sql`create index on ${sql.table(table)} (org_id, status, updated_at desc)`.execute(db);
		await sql`analyze ${sql.table(table)}`.execute(db);

		const viewer = { userId: 'u1', seesAll: false, seesOwn: false };
		const qs = queries();
		const moduleMs: number[] = [];
		const ilikeMs: number[] = [];
		let moduleHits = 0;
		let ilikeHits = 0;
		// Warm both up on queries not measured.
		for (const q of qs.slice(0, 5)) {
			await runEntrySearch(engine, orgId(0), viewer, searchQuery.parse({ q }), (id) => id);
		}
		for (const [k, q] of qs.entries()) {
			const org = orgId(k % ORGS);
			const t0 = performance.now();
			const res = await runEntrySearch(engine, org, viewer, searchQuery.parse({ q }), (id) => id);
			moduleMs.push(performance.now() - t0);
			moduleHits += res.total;

			const patterns = q.split(/\s+/).map((w) => `%${w.replace(/[\\%_]/g, (c) => `\\${c}`)}%`);
			const t1 = performance.now();
			const rows = await sql<{ id: string; n: number }>`
				select id, count(*) over ()::int as n from ${sql.table(table)}
				where org_id = ${org}::uuid and status = 'published'
				  and (title || ' ' || symptom || ' ' || cause || ' ' || fix || ' ' || body || ' ' || array_to_string(tags, ' ') || ' ' || coalesce(assembly, '') || ' ' || coalesce(part_number, ''))
				      ilike all (${patterns}::text[])
				order by updated_at desc limit 20`.execute(db);
			ilikeMs.push(performance.now() - t1);
			ilikeHits += rows.rows[0]?.n ?? 0;
		}
		const mP50 = percentile(moduleMs, 0.5);
		const iP50 = percentile(ilikeMs, 0.5);
		const rows = [
			['entries', SIZE.toLocaleString('en'), ''],
			['indexing through the module', `${Math.round(SIZE / (indexMs / 1000)).toLocaleString('en')} entries/s`, `(${(indexMs / 1000).toFixed(1)} s; Postgres insert ${(pgMs / 1000).toFixed(1)} s)`],
			['(a) module search p50 / p95', `${fmtMs(mP50)} / ${fmtMs(percentile(moduleMs, 0.95))}`, `mean ${(moduleHits / qs.length).toFixed(0)} matches per query`],
			['(b) ILIKE scan p50 / p95', `${fmtMs(iP50)} / ${fmtMs(percentile(ilikeMs, 0.95))}`, `mean ${(ilikeHits / qs.length).toFixed(0)} matches per query (no typos, no synonyms)`],
			['(b) ÷ (a) at p50', ratio(iP50 / mP50), `at p95 ${ratio(percentile(ilikeMs, 0.95) / percentile(moduleMs, 0.95))}`]
		];
		const w0 = Math.max(...rows.map((r) => r[0].length));
		const w1 = Math.max(...rows.map((r) => r[1].length));
		for (const r of rows) console.log(`${r[0].padEnd(w0)}  ${r[1].padEnd(w1)}  ${r[2]}`);
		console.log(
			`\n${qs.length} queries over ${ORGS} organisations (about ${Math.round(SIZE / ORGS).toLocaleString('en')} entries each), viewer visibility; (a) includes the HTTP round trip to ${external ? `the engine at ${external}` : 'the in-memory stand-in (set MEILISEARCH_URL to measure a real engine)'} and the facet counts.`
		);
	} finally {
		await sql`drop table if exists ${sql.table(table)}`.execute(db).catch(() => undefined);
		await engine.client.deleteIndex(engine.index).waitTask().catch(() => undefined);
		await db.destroy();
		await standin?.close();
	}
}
