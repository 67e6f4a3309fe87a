#!/usr/bin/env node
// `npm start`: everything from a fresh clone to a running Curvelore on 127.0.0.1.
// Installs dependencies when missing or stale, ensures our loopback PostgreSQL, migrates, seeds
// demo data into an empty database, starts local stand-ins for mail and search when no real ones
// are configured, builds, serves, and prints where to go. Ctrl-C stops what it started.
import { randomBytes } from 'node:crypto';
import { existsSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import {
	BIN,
	DATA_DIR,
	die,
	ensureDataDir,
	ensureDependencies,
	portInUse,
	requireNode,
	runOrDie,
	startChild,
	step,
	waitForHttp
} from './lib/run.js';

requireNode();
ensureDataDir();

const LOCK = join(DATA_DIR, 'start.pid');
if (existsSync(LOCK)) {
	const [pid, url] = readFileSync(LOCK, 'utf8').trim().split('\n');
	let alive = false;
	try {
		process.kill(Number(pid), 0);
		alive = readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('start.js');
	} catch {
		alive = false;
	}
	if (alive) die(`Curvelore is already running (process ${pid}) at ${url}. Stop it with Ctrl-C in its terminal first.`);
	rmSync(LOCK, { force: true });
}

const port = Number(process.env.PORT ?? 3000);
if (!Number.isInteger(port) || port < 1 || port > 65535) die(`PORT must be a number from 1 to 65535, not "${process.env.PORT}".`);
const origin = process.env.ORIGIN ?? `http://localhost:${port}`;
if (await portInUse(port)) die(`Port ${port} is already in use on 127.0.0.1. Stop the program using it, or start with PORT=<another port> npm start.`);

writeFileSync(LOCK, `${process.pid}\n${origin}\n`);
const cleanups = [() => rmSync(LOCK, { force: true })];
let stopping = false;
async function shutdown(code = 0) {
	if (stopping) return;
	stopping = true;
	for (const fn of cleanups.reverse()) {
		try {
			await fn();
		} catch (e) {
			console.error(e instanceof Error ? e.message : e);
		}
	}
	process.exit(code);
}
process.on('SIGINT', () => void shutdown(0));
process.on('SIGTERM', () => void shutdown(0));

try {
	ensureDependencies();
	const { ensurePostgres, stopPostgres, localUrl } = await import('./postgres.js');
	const pg = await ensurePostgres();
	if (pg.started) cleanups.push(() => {
		step('Stopping PostgreSQL…');
		stopPostgres();
	});
	const databaseUrl = process.env.DATABASE_URL ?? localUrl();

	const secretFile = join(DATA_DIR, 'auth-secret');
	if (!process.env.AUTH_SECRET && !existsSync(secretFile)) {
		writeFileSync(secretFile, randomBytes(32).toString('base64url') + '\n', { mode: 0o600 });
	}
	const authSecret = process.env.AUTH_SECRET ?? readFileSync(secretFile, 'utf8').trim();
	const env = { ...process.env, DATABASE_URL: databaseUrl, AUTH_SECRET: authSecret, ORIGIN: origin };

	step('Migrating the database…');
	runOrDie(join(BIN, 'tsx'), ['scripts/migrate.ts', 'up'], 'Database migration failed (see above).', { env });
	runOrDie(join(BIN, 'tsx'), ['scripts/seed.ts'], 'Seeding demo data failed (see above).', { env });

	const { startLocalServices } = await import('./lib/services.js');
	const services = await startLocalServices(env);
	cleanups.push(() => services.stop());
	Object.assign(env, services.env);

	step('Building the app…');
	runOrDie(join(BIN, 'vite'), ['build', '--logLevel', 'warn'], 'The build failed (see above).', { env });

	step('Starting the server…');
	const server = startChild('app', process.execPath, ['build/index.js'], {
		env: { BODY_SIZE_LIMIT: '25M', ...env, HOST: '127.0.0.1', PORT: String(port), NODE_ENV: 'production' }
	});
	cleanups.push(
		() =>
			new Promise((resolve) => {
				if (server.exitCode !== null) return resolve(undefined);
				server.once('exit', resolve);
				server.kill('SIGTERM');
				setTimeout(resolve, 5000).unref();
			})
	);
	server.once('exit', (code) => {
		if (!stopping) {
			console.error(`✗ The server stopped unexpectedly (exit ${code}).`);
			void shutdown(1);
		}
	});
	const health = await waitForHttp(`http://127.0.0.1:${port}/api/health`, 30_000);
	if (!health || !health.ok) throw new Error('The server did not become healthy within 30 seconds (see its messages above).');

	console.log(`
  Curvelore is running at ${origin}
${(services.env.DEV_MAILBOX_URL
	? // The addresses of DEMO_USERS in src/lib/server/demo/seed.ts.
		`  Sign in at ${origin}/login with a demo address:
    ilse.admin@fernhollow.example        (admin)
    teodor.author@fernhollow.example     (author)
    pim.contributor@fernhollow.example   (contributor)
  Mail goes to the local stand-in; open the sign-in link from ${origin}/dev/mailbox\n`
	: '')}  Press Ctrl-C to stop.
`);
} catch (e) {
	console.error(`✗ ${e instanceof Error ? e.message : e}`);
	await shutdown(1);
}
