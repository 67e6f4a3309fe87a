/**
 * `npm run search:reindex`: rebuilds every entry's search document from Postgres (the only source
 * of truth) into the engine at MEILISEARCH_URL, without emptying the index first, then removes
 * documents whose entries are gone. A progress bar on a terminal, plain progress lines otherwise
 * (CI logs, pipes).
 */
import { createDb } from '../src/lib/server/db/connect';
import { allEntryDocuments } from '../src/lib/server/entries/documents';
import { createSearchEngine, reindex } from '../src/lib/server/search/engine';

const url = process.env.DATABASE_URL ?? `postgres://curvelore@127.0.0.1:${process.env.CURVELORE_PG_PORT ?? 54329}/curvelore`;
const searchUrl = process.env.MEILISEARCH_URL;
if (!searchUrl) {
	console.error(
		'✗ Set MEILISEARCH_URL (and MEILISEARCH_KEY) to the search engine to rebuild. With the local stand-in nothing is needed: the app rebuilds it from the database whenever it starts.'
	);
	process.exit(2);
}

const tty = Boolean(process.stdout.isTTY);
const fmt = (n: number) => n.toLocaleString('en');

function progressLine(done: number, total: number): string {
	const fraction = total === 0 ? 1 : Math.min(1, done / total);
	const width = 30;
	const filled = Math.round(fraction * width);
	return `  [${'█'.repeat(filled)}${'░'.repeat(width - filled)}] ${fmt(done)} / ${fmt(total)} entries (${Math.floor(fraction * 100)} %)`;
}

const db = createDb(url, { max: 2 });
try {
	const { n: total } = await db
		.selectFrom('entry')
		.select((eb) => eb.fn.countAll<string>().as('n'))
		.where('deletedAt', 'is', null)
		.executeTakeFirstOrThrow()
		.then((r) => ({ n: Number(r.n) }));
	const engine = createSearchEngine({ url: searchUrl, key: process.env.MEILISEARCH_KEY || undefined, timeout: 30_000 });
	console.log(`→ Rebuilding the search index at ${searchUrl} from ${fmt(total)} entries…`);
	const started = performance.now();
	let lastStep = -1;
	const result = await reindex(engine, allEntryDocuments(db), (done) => {
		if (tty) {
			process.stdout.write(`\r${progressLine(done, total)}`);
			return;
		}
		const step = total === 0 ? 10 : Math.floor((done / total) * 10);
		if (step > lastStep) {
			lastStep = step;
			console.log(`  ${fmt(done)} / ${fmt(total)} entries indexed`);
		}
	});
	if (tty) process.stdout.write(`\r${progressLine(result.indexed, Math.max(total, result.indexed))}\n`);
	const seconds = (performance.now() - started) / 1000;
	console.log(
		`✓ Indexed ${fmt(result.indexed)} entries and removed ${fmt(result.removed)} stale documents in ${seconds.toFixed(1)} s.`
	);
} catch (e) {
	if (tty) process.stdout.write('\n');
	console.error(`✗ Reindexing failed: ${e instanceof Error ? e.message : e}`);
	process.exitCode = 1;
} finally {
	await db.destroy();
}
