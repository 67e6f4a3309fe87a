/**
 * `npm run bench`: runs every benchmark module in tests/bench/ (or those named on the command
 * line, e.g. `npm run bench -- engine`) one after another in this one process, so the ratios each
 * prints are measured against baselines taken in the same run on the same machine.
 *
 * A module exports `name` and `run(): Promise<void>`, and prints its own table.
 */
import { readdirSync } from 'node:fs';
import { basename, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const dir = fileURLToPath(new URL('../tests/bench/', import.meta.url));
const wanted = process.argv.slice(2);
const files = readdirSync(dir)
	.filter((f) => f.endsWith('.bench.ts'))
	.filter((f) => wanted.length === 0 || wanted.includes(basename(f, '.bench.ts')))
	.sort();

if (files.length === 0) {
	console.error(`No benchmark matches ${wanted.join(', ')}. Available: ${readdirSync(dir).join(', ')}`);
	process.exit(2);
}

for (const file of files) {
	const mod = (await import(pathToFileURL(join(dir, file)).href)) as {
		name?: string;
		run: () => Promise<void>;
	};
	console.log(`\n=== ${mod.name ?? basename(file, '.bench.ts')} ===`);
	await mod.run();
}
