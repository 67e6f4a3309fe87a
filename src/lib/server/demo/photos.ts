import { type Transaction, sql } from 'kysely';
import { photoMarkdown } from '../../photos/urls';
import type { Database } from '../db/connect';
import { insertPhoto } from '../attachments/queries';
import { checkedUpload } from '../attachments/upload';
import { encodePng, Raster, type Rgb } from './drawing';

/**
 * Demo photos: pictures the seed draws itself, for a handful of demo entries, shown from their
 * text. Invented like everything else in the demo: the boards are made-up outlines with the probe
 * points marked, and the curve pictures are drawn from the entries' own (simulated) traces.
 */

const BOARD: Rgb = [38, 104, 74];
const SILK: Rgb = [232, 236, 228];
const PAD: Rgb = [206, 170, 92];
const CHIP: Rgb = [32, 34, 38];
const PROBE_1: Rgb = [214, 48, 40];
const PROBE_2: Rgb = [20, 20, 20];
const PAPER: Rgb = [250, 250, 247];
const GRID: Rgb = [222, 224, 220];
const AXIS: Rgb = [120, 124, 128];
const FAULT: Rgb = [196, 64, 36];
const GOOD: Rgb = [36, 110, 170];

/** Deterministic, so every seeded database draws the same boards. */
function random(seed: number): () => number {
	let s = seed >>> 0;
	return () => ((s = (s * 1664525 + 1013904223) >>> 0) / 2 ** 32);
}

type Probe = 'part' | 'pad' | 'pin';

/**
 * A made-up board outline with parts, and the entry's two probe points marked (probe 1 red,
 * probe 2 black): across the two pads of one small part (`part`), from one pad of a part to a
 * mounting hole, which is ground (`pad`), or from a chip pin to ground (`pin`).
 */
function drawBoard(seed: number, probe: Probe): Uint8Array {
	const rnd = random(seed);
	const r = new Raster(480, 320, PAPER);
	r.rect(20, 20, 440, 280, BOARD);
	r.frame(20, 20, 440, 280, SILK, 2);
	for (const [x, y] of [[36, 36], [444, 36], [36, 284], [444, 284]]) r.ring(x, y, 7, SILK, 3);
	const pins: [number, number][] = [];
	const parts: [number, number, number, number][] = [];
	// A few chips with their pins, and small two-pad parts around them.
	for (let k = 0; k < 3; k++) {
		const x = 70 + k * 130 + rnd() * 30;
		const y = 70 + rnd() * 90;
		r.rect(x, y, 70, 46, CHIP);
		r.frame(x - 3, y - 3, 76, 52, SILK);
		for (let p = 0; p < 6; p++) {
			r.rect(x + 6 + p * 11, y - 10, 5, 8, PAD);
			r.rect(x + 6 + p * 11, y + 48, 5, 8, PAD);
			pins.push([x + 8.5 + p * 11, y + 52]);
		}
	}
	for (let k = 0; k < 9; k++) {
		const x = 50 + rnd() * 360;
		const y = 210 + rnd() * 60;
		r.rect(x, y, 8, 8, PAD);
		r.rect(x + 18, y, 8, 8, PAD);
		r.rect(x + 8, y + 2, 10, 4, SILK);
		parts.push([x + 4, y + 4, x + 22, y + 4]);
	}
	let a: [number, number];
	let b: [number, number];
	if (probe === 'pin') {
		a = pins[Math.floor(rnd() * pins.length)];
		b = [36, 284];
	} else {
		const part = parts[Math.floor(rnd() * parts.length)];
		a = [part[0], part[1]];
		b = probe === 'pad' ? [36, 284] : [part[2], part[3]];
		r.frame(part[0] - 9, part[1] - 9, 36, 18, SILK);
	}
	r.line(a[0], a[1], b[0], b[1], SILK, 2, 6);
	r.ring(a[0], a[1], 11, PROBE_1, 4);
	r.ring(b[0], b[1], 11, PROBE_2, 4);
	r.disc(a[0], a[1], 3, PROBE_1);
	r.disc(b[0], b[1], 3, PROBE_2);
	return encodePng(r);
}

/** The V-I plane at full scale (±Vs across, ±Vs/Rs up) with the fault and known-good curves. */
function drawCurves(curves: { vn: number[]; in: number[]; good: boolean }[]): Uint8Array {
	const size = 320;
	const r = new Raster(size, size, PAPER);
	const m = 16;
	const px = (x: number) => m + ((x + 1) / 2) * (size - 2 * m);
	const py = (y: number) => size - m - ((y + 1) / 2) * (size - 2 * m);
	for (let k = -4; k <= 4; k++) {
		r.line(px(k / 4), py(-1), px(k / 4), py(1), GRID);
		r.line(px(-1), py(k / 4), px(1), py(k / 4), GRID);
	}
	r.line(px(-1), py(0), px(1), py(0), AXIS, 2);
	r.line(px(0), py(-1), px(0), py(1), AXIS, 2);
	// Known-good first, so the fault curve is drawn on top.
	for (const c of [...curves].sort((x, y) => Number(y.good) - Number(x.good))) {
		const points = c.vn.map((v, k) => [px(Math.max(-1, Math.min(1, v))), py(Math.max(-1, Math.min(1, c.in[k])))] as const);
		r.path(points, c.good ? GOOD : FAULT, c.good ? 2 : 3, true);
	}
	return encodePng(r);
}

/** Which demo entries get drawn photos (by title), with the alt text of the board picture. */
const WITH_PHOTOS: { title: string; board: string; probe: Probe }[] = [
	{ title: 'Gate resistor R27 open after a phase-leg failure', board: 'Drawn board outline with the probes across R27 marked', probe: 'part' },
	{ title: 'Output electrolytic C12 dried out: 10 µF left as 2.2 µF', board: 'Drawn board outline with the probes across C12 marked', probe: 'part' },
	{ title: 'Bootstrap diode D5 leaky', board: 'Drawn board outline with the probes across D5 marked', probe: 'part' },
	{ title: 'Reference zener D9 reads 3.9 V instead of 5.1 V', board: 'Drawn board outline with probe 1 on D9 and probe 2 on ground marked', probe: 'pad' },
	{ title: 'MCU input pin PA3 ESD diode leaking', board: 'Drawn board outline with probe 1 on U1 pin 17 and probe 2 on ground marked', probe: 'pin' }
];

/**
 * Draws and attaches the demo photos inside the seeding transaction, after the entries and their
 * traces exist, and shows them from each entry's text (the entry and its first revision alike).
 * Returns how many photos it stored.
 */
export async function seedDemoPhotos(trx: Transaction<Database>, org: { id: string; slug: string }, createdBy: string): Promise<number> {
	let stored = 0;
	for (const [index, demo] of WITH_PHOTOS.entries()) {
		const entry = await trx.selectFrom('entry').select(['id', 'body']).where('orgId', '=', org.id).where('title', '=', demo.title).executeTakeFirst();
		if (!entry) continue;
		const traces = await trx.selectFrom('trace').select(['role', 'canonical', 'sourcePeakV', 'sourceResistanceOhm']).where('orgId', '=', org.id).where('entryId', '=', entry.id).execute();
		const curves = traces.map((t) => {
			const c = t.canonical as unknown as { v: number[]; i: number[] };
			const isc = t.sourcePeakV / t.sourceResistanceOhm;
			return { vn: c.v.map((v) => v / t.sourcePeakV), in: c.i.map((i) => i / isc), good: t.role === 'known-good' };
		});
		const pictures = [
			{ name: `board-${index + 1}.png`, bytes: drawBoard(1000 + index, demo.probe), alt: `${demo.board} (demo drawing)` },
			{ name: `curves-${index + 1}.png`, bytes: drawCurves(curves), alt: 'Drawn V-I plot: the curve as found (orange) over the expected one (blue), at full scale (demo drawing)' }
		];
		const lines: string[] = [];
		for (const p of pictures) {
			const upload = checkedUpload(p.name, p.bytes);
			if (!upload.ok) throw new Error(`demo photo ${p.name}: ${upload.message}`);
			const id = await insertPhoto(trx, org.id, { entryId: entry.id, fileName: upload.fileName, contentType: upload.type, width: upload.width, height: upload.height, data: upload.bytes, createdBy });
			lines.push(photoMarkdown(org.slug, { id, fileName: upload.fileName }, p.alt));
			stored++;
		}
		const body = `${entry.body}\n\n## Photos\n\n${lines.join('\n\n')}\n`;
		await trx.updateTable('entry').set({ body }).where('orgId', '=', org.id).where('id', '=', entry.id).execute();
		// The first revision is the entry as written: keep it equal to what the entry shows.
		await trx
			.updateTable('entryRevision')
			.set({ snapshot: sql`jsonb_set(snapshot, '{body}', to_jsonb(${body}::text))` })
			.where('orgId', '=', org.id)
			.where('entryId', '=', entry.id)
			.where('version', '=', 1)
			.execute();
	}
	return stored;
}
