/**
 * Runs the local search stand-in as a process: `tsx search/standin/main.ts`. Listens on
 * 127.0.0.1:$STANDIN_PORT_HTTP (default 7700). The key is taken from MEILISEARCH_KEY when set,
 * otherwise generated for this run and written to a file (mode 600) named after the port, where
 * the service registry reads it to hand it to the app; the file is removed on exit.
 * Also importable: `startStandin({ port, masterKey })` for tests.
 */
import { randomBytes } from 'node:crypto';
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { startStandin } from './server';

export { startStandin } from './server';
export type { Standin, StandinOptions } from './server';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..', '..');

/** Where the stand-in listening on `port` leaves its generated key. */
export function standinKeyFile(port: number): string {
	return join(ROOT, '.data', `search-standin-${port}.key`);
}

async function main(): Promise<void> {
	const port = Number(process.env.STANDIN_PORT_HTTP ?? 7700);
	if (!Number.isInteger(port) || port < 1 || port > 65535) {
		console.error(`STANDIN_PORT_HTTP must be a port number, not "${process.env.STANDIN_PORT_HTTP}".`);
		process.exit(2);
	}
	const masterKey = process.env.MEILISEARCH_KEY || randomBytes(24).toString('base64url');
	const keyFile = standinKeyFile(port);
	mkdirSync(dirname(keyFile), { recursive: true });
	writeFileSync(keyFile, masterKey + '\n', { mode: 0o600 });
	const standin = await startStandin({ port, masterKey });
	console.log(`search stand-in listening on ${standin.url} (in memory: rebuilt from the database at start)`);
	const stop = () => {
		rmSync(keyFile, { force: true });
		void standin.close().then(() => process.exit(0));
	};
	process.on('SIGTERM', stop);
	process.on('SIGINT', stop);
}

const invoked = process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1];
if (invoked) {
	main().catch((e) => {
		console.error(e instanceof Error ? e.message : e);
		process.exit(1);
	});
}
