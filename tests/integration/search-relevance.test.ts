/**
 * Relevance as a table: what a junior types → the entry a senior wrote that must come back in the
 * top three. The fixture entries are invented (demo style) but say what such entries say; the
 * equivalences the queries lean on (a cap is a capacitor, a Z-diode a zener, "dead short" a short,
 * "no continuity" an open, the knee the forward drop) are words of the trade, common practice, no
 * source. Runs through the app's search module against the local stand-in, and against the engine
 * at MEILISEARCH_URL too when one is configured.
 */
import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { searchQuery } from '../../src/lib/schemas/search';
import { startStandin } from '../../search/standin/server';
import { ENTRIES_SETTINGS } from '../../search/settings';
import { createSearchEngine, ensureIndex, indexDocuments, type SearchEngine } from '../../src/lib/server/search/engine';
import { runEntrySearch } from '../../src/lib/server/search/entry-search';
import { entryDoc, ORG_A } from './search-fixtures';

const e = (title: string, fields: Parameters<typeof entryDoc>[1]) => entryDoc(title.toLowerCase().replace(/[^a-z0-9]+/g, '-').slice(0, 60), { title, ...fields });

/** A small shop's library: close neighbours on purpose, so a ranking that only matches one word fails. */
const LIBRARY = [
	e('Leaky bootstrap capacitor on the gate driver', {
		symptom: 'Ellipse tilted toward a resistor on C14 of the high-side supply',
		cause: 'Electrolyte leakage of about 3 kΩ after heat from the driver IC.',
		fix: 'Replace C14 with a 105 °C part.',
		componentKind: 'electrolytic',
		assembly: 'GD-7 gate-driver board',
		tags: ['gate-driver', 'bootstrap']
	}),
	e('Leaky electrolytic on the 12 V rail', {
		symptom: 'Tilted ellipse on the output electrolytic',
		cause: 'Internal leakage path of about 2.2 kΩ.',
		componentKind: 'electrolytic',
		assembly: 'PS-12 bench supply',
		tags: ['leaky']
	}),
	e('Gate resistor R27 open on the gate driver', {
		symptom: 'Flat line where a slope should be',
		cause: 'Driver failure fused the resistor.',
		componentKind: 'resistor',
		assembly: 'GD-7 gate-driver board',
		tags: ['gate-drive']
	}),
	e('Base-emitter junction degraded, soft knee', {
		symptom: 'Knee rounded and too soft, with a slope before it',
		cause: 'Junction degraded: behaves like a diode with 330 Ω across it.',
		componentKind: 'transistor-junction',
		tags: ['soft-knee', 'leaky']
	}),
	e('Signal diode knee too early', {
		symptom: 'Knee at 0.3 V instead of 0.6 V',
		cause: 'A Schottky part fitted in place of a silicon diode.',
		componentKind: 'diode',
		tags: ['wrong-part']
	}),
	e('Reference zener reads 3.9 V instead of 5.1 V', {
		symptom: 'Second knee too early: the output regulates low',
		cause: 'Wrong zener value from a mixed bin.',
		componentKind: 'zener',
		tags: ['regulation']
	}),
	e('Gate oxide punctured on the MOSFET', {
		symptom: 'Reads short on the tester, but the ohmmeter says 40 Ω',
		cause: 'Gate overvoltage punctured the oxide: gate to source now about 40 Ω.',
		fix: 'Replace the MOSFET and its gate clamp.',
		componentKind: 'other',
		tags: ['mosfet', 'gate-oxide']
	}),
	e('Bus capacitor dielectric shorted', {
		symptom: 'Vertical line across the DC bus',
		cause: 'Overvoltage punched through the dielectric.',
		fix: 'Replace both bus capacitors; they hold a dangerous charge, discharge first.',
		componentKind: 'electrolytic',
		tags: ['dc-bus']
	}),
	e('Solder bridge on the feedback net', {
		symptom: 'Vertical line on TP7: a dead short to ground',
		cause: 'Solder bridge under U5 from rework.',
		componentKind: 'connector',
		tags: ['solder-bridge']
	}),
	e('Transformer primary winding open', {
		symptom: 'Flat line through the primary',
		cause: 'Thermal fuse inside the winding opened.',
		componentKind: 'inductor',
		tags: ['transformer']
	}),
	e('Lifted lead on the driver IC output', {
		symptom: 'No continuity from U3 pin 6 to its pad',
		cause: 'Solder joint cracked under vibration.',
		componentKind: 'ic-pin',
		tags: ['lifted-lead']
	}),
	e('Clamp Z-diode failed short', {
		symptom: 'One vertical line where two knees should be',
		cause: 'Absorbed a gate overvoltage event.',
		componentKind: 'zener',
		tags: ['clamp']
	}),
	e('Dried-out output capacitor lost capacitance', {
		symptom: 'Ellipse too round and too small compared with the good board',
		cause: 'Electrolyte dried out beside the rectifier heatsink.',
		componentKind: 'electrolytic',
		tags: ['dried-out']
	}),
	e('Pull-up resistor drifted high', {
		symptom: 'Slope much flatter than the neighbouring pull-ups',
		cause: 'Heat from the regulator cooked the film.',
		componentKind: 'resistor',
		tags: ['pull-up']
	}),
	e('Ceramic decoupling capacitor cracked open', {
		symptom: 'Flat line where the good board shows an ellipse',
		cause: 'Board flex at the connector cracked the ceramic.',
		componentKind: 'capacitor',
		tags: ['cracked']
	}),
	e('Relay coil resistance too high', {
		symptom: 'Curve reads mostly resistive',
		cause: 'Corroded coil termination adds about 1 kΩ.',
		componentKind: 'inductor',
		tags: ['relay']
	})
];

const byTitle = (t: string) => {
	const doc = LIBRARY.find((d) => d.title === t);
	if (!doc) throw new Error(`No fixture titled ${t}`);
	return doc.title;
};

/** query → the title that must rank in the top 3. */
type Kind = 'phrasing' | 'typo' | 'synonym';
/**
 * query → the title that must rank in the top 3. `probe` is the part of the query that reaches
 * the entry only through the feature named by `kind`: the control below switches the feature off
 * and checks the probe alone then misses, so no row passes by luck of wording.
 */
const CASES: [query: string, mustFind: string, kind: Kind, probe: string | null][] = [
	// The three phrasings from the shop floor.
	['leaky cap on the gate driver', byTitle('Leaky bootstrap capacitor on the gate driver'), 'phrasing', null],
	['knee too soft', byTitle('Base-emitter junction degraded, soft knee'), 'phrasing', null],
	['reads short but ohmmeter says 40 Ω', byTitle('Gate oxide punctured on the MOSFET'), 'phrasing', null],
	['dead short feedback', byTitle('Solder bridge on the feedback net'), 'phrasing', null],
	// Typos.
	['leaky capasitor', byTitle('Leaky bootstrap capacitor on the gate driver'), 'typo', 'capasitor'],
	['transfomer primary open', byTitle('Transformer primary winding open'), 'typo', 'transfomer'],
	['dielectic shorted', byTitle('Bus capacitor dielectric shorted'), 'typo', 'dielectic'],
	// Synonyms.
	['leaky e-cap', byTitle('Leaky electrolytic on the 12 V rail'), 'synonym', 'e-cap'],
	['condenser dried out', byTitle('Dried-out output capacitor lost capacitance'), 'synonym', 'condenser'],
	['zener shorted', byTitle('Clamp Z-diode failed short'), 'synonym', 'shorted'],
	['Z-diode reads low', byTitle('Reference zener reads 3.9 V instead of 5.1 V'), 'synonym', 'Z-diode'],
	['short circuit on the DC bus', byTitle('Bus capacitor dielectric shorted'), 'synonym', 'short circuit'],
	['open lead on driver pin', byTitle('Lifted lead on the driver IC output'), 'synonym', 'open'],
	['no continuity winding', byTitle('Transformer primary winding open'), 'synonym', 'no continuity'],
	['forward drop too low', byTitle('Signal diode knee too early'), 'synonym', 'forward drop'],
	['forward voltage 0.3 V', byTitle('Signal diode knee too early'), 'synonym', 'forward voltage']
];

const targets: { name: string; start: () => Promise<{ url: string; key?: string; stop: () => Promise<void> }> }[] = [
	{
		name: 'local stand-in',
		async start() {
			const key = randomBytes(12).toString('hex');
			const s = await startStandin({ masterKey: key });
			return { url: s.url, key, stop: () => s.close() };
		}
	}
];
if (process.env.MEILISEARCH_URL) {
	targets.push({ name: 'engine at MEILISEARCH_URL', start: async () => ({ url: process.env.MEILISEARCH_URL!, key: process.env.MEILISEARCH_KEY || undefined, stop: async () => {} }) });
}

const VIEWER = { userId: 'nobody', seesAll: false, seesOwn: false };

describe.each(targets)('search relevance: $name', (target) => {
	let engine: SearchEngine;
	let stop: () => Promise<void>;
	const uid = `relevance_${randomBytes(6).toString('hex')}`;

	beforeAll(async () => {
		const conn = await target.start();
		stop = conn.stop;
		engine = createSearchEngine({ url: conn.url, key: conn.key, index: uid });
		await ensureIndex(engine);
		await indexDocuments(engine, LIBRARY);
	});
	afterAll(async () => {
		await engine.client.deleteIndex(uid).waitTask().catch(() => undefined);
		await stop();
	});

	const top3 = async (q: string) =>
		(await runEntrySearch(engine, ORG_A, VIEWER, searchQuery.parse({ q, limit: '3' }), (id) => `/e/${id}`)).hits.map((h) => h.title);

	it.each(CASES)('"%s" ranks "%s" in the top 3 (%s)', async (query, mustFind) => {
		expect(await top3(query)).toContain(mustFind);
	});

	it.each(CASES.filter((c) => c[3]))('the probe of "%s" alone finds "%s" (%s: "%s")', async (_query, mustFind, _kind, probe) => {
		const all = await runEntrySearch(engine, ORG_A, VIEWER, searchQuery.parse({ q: probe, limit: '50' }), (id) => `/e/${id}`);
		expect(all.hits.map((h) => h.title)).toContain(mustFind);
	});

	it('ranks by every word, not by one: "leaky cap on the gate driver" puts the gate-driver capacitor first', async () => {
		// Both other leaky entries and the gate-driver resistor match some of the words; only one matches all.
		expect((await top3('leaky cap on the gate driver'))[0]).toBe('Leaky bootstrap capacitor on the gate driver');
	});

	it('finds nothing for words no entry uses, rather than something at random', async () => {
		expect(await top3('quokka marzipan')).toEqual([]);
	});
});

/**
 * The control: with synonyms off, each synonym case misses; with typo tolerance off, each typo
 * case misses. So every row above passes because of the feature it names, not by luck of wording.
 */
describe('search relevance control (stand-in, features switched off)', () => {
	let stop: () => Promise<void>;
	const engines: Record<'noSynonyms' | 'noTypos', SearchEngine> = {} as never;

	beforeAll(async () => {
		const key = randomBytes(12).toString('hex');
		const s = await startStandin({ masterKey: key });
		stop = () => s.close();
		for (const [name, patch] of [
			['noSynonyms', { synonyms: {} }],
			['noTypos', { typoTolerance: { ...ENTRIES_SETTINGS.typoTolerance, enabled: false } }]
		] as const) {
			const engine = createSearchEngine({ url: s.url, key, index: `control_${name}` });
			await engine.client.createIndex(engine.index, { primaryKey: 'id' }).waitTask();
			await engine.client.index(engine.index).updateSettings({ ...ENTRIES_SETTINGS, ...patch }).waitTask();
			await indexDocuments(engine, LIBRARY);
			engines[name] = engine;
		}
	});
	afterAll(() => stop());

	const found = async (engine: SearchEngine, q: string) =>
		(await runEntrySearch(engine, ORG_A, VIEWER, searchQuery.parse({ q, limit: '50' }), (id) => `/e/${id}`)).hits.map((h) => h.title);

	it.each(CASES.filter((c) => c[2] === 'synonym'))('without synonyms, the probe of "%s" misses "%s"', async (_query, mustFind, _kind, probe) => {
		expect(await found(engines.noSynonyms, probe!)).not.toContain(mustFind);
	});

	it.each(CASES.filter((c) => c[2] === 'typo'))('without typo tolerance, the probe of "%s" misses "%s"', async (_query, mustFind, _kind, probe) => {
		expect(await found(engines.noTypos, probe!)).not.toContain(mustFind);
	});
});
