#!/usr/bin/env node
// `npm test`: sets up everything the tests need, then runs every test. In order: type check
// (svelte-check), unit tests, integration tests on a real PostgreSQL (a test database wiped per
// run), the generated database types checked against the migrated schema, the production build,
// and end-to-end tests in Debian's Chromium against that build (a seeded e2e database).
// Every stage runs even when an earlier one fails; the exit code is non-zero if any failed.
import { join } from 'node:path';
import {
	BIN,
	die,
	ensureDataDir,
	ensureDebianPackage,
	ensureDependencies,
	freePort,
	requireNode,
	runStatus,
	step,
	which
} from './lib/run.js';

requireNode();
ensureDataDir();
const started = Date.now();
ensureDependencies();
ensureDebianPackage('chromium', () => which('chromium') !== null, 'End-to-end tests');
ensureDebianPackage('ngspice', () => which('ngspice') !== null, 'The simulator oracle tests');

const { ensurePostgres, stopPostgres, localUrl, TEST_DB, E2E_DB } = await import('./postgres.js');
const external = Boolean(process.env.DATABASE_URL);
if (external && !(process.env.TEST_DATABASE_URL && process.env.E2E_DATABASE_URL)) {
	die('With DATABASE_URL set, also set TEST_DATABASE_URL and E2E_DATABASE_URL to databases the tests may wipe.');
}
const pg = await ensurePostgres();
const testUrl = process.env.TEST_DATABASE_URL ?? localUrl(TEST_DB);
const e2eUrl = process.env.E2E_DATABASE_URL ?? localUrl(E2E_DB);

const { default: pgLib } = await import('pg');
/** Empties a database completely (every table, type and migration record). */
async function wipe(url) {
	const client = new pgLib.Client({ connectionString: url });
	await client.connect();
	try {
		await client.query('drop schema public cascade; create schema public;');
	} finally {
		await client.end();
	}
}

const { startLocalServices } = await import('./lib/services.js');
const services = await startLocalServices(process.env);
const baseEnv = {
	...process.env,
	...services.env,
	AUTH_SECRET: process.env.AUTH_SECRET ?? 'test-secret-that-is-long-enough-for-auth-js-0123456789'
};

/** @type {{ name: string, ok: boolean, seconds: number }[]} */
const results = [];
function stage(name, fn) {
	step(name);
	const t0 = Date.now();
	let ok = false;
	try {
		ok = fn() === 0;
	} catch (e) {
		console.error(e);
	}
	results.push({ name, ok, seconds: (Date.now() - t0) / 1000 });
	return ok;
}
const tool = (name) => join(BIN, name);

stage('Type check (svelte-check)', () => {
	if (runStatus(tool('svelte-kit'), ['sync']) !== 0) return 1;
	return runStatus(tool('svelte-check'), ['--tsconfig', './tsconfig.json', '--fail-on-warnings', '--output', 'human']);
});

stage('Unit tests (vitest)', () => runStatus(tool('vitest'), ['run', '--project', 'unit'], { env: baseEnv }));

await wipe(testUrl);
const integrationEnv = { ...baseEnv, DATABASE_URL: testUrl };
stage('Integration tests (vitest, PostgreSQL)', () =>
	runStatus(tool('vitest'), ['run', '--project', 'integration'], { env: integrationEnv })
);
stage('Database types match the migrated schema (kysely-codegen --verify)', () =>
	runStatus(tool('kysely-codegen'), ['--verify', '--log-level', 'error'], { env: integrationEnv })
);

const built = stage('Production build (vite build)', () =>
	runStatus(tool('vite'), ['build', '--logLevel', 'warn'], { env: baseEnv })
);

if (built) {
	await wipe(e2eUrl);
	// Every browser test signs in from 127.0.0.1, so the per-client link limit is lifted here;
	// the per-address limit stays as it is and has its own test.
	const e2eEnv = { ...baseEnv, DATABASE_URL: e2eUrl, SIGN_IN_LINKS_PER_CLIENT: '1000' };
	const prepared =
		runStatus(tool('tsx'), ['scripts/migrate.ts', 'up'], { env: e2eEnv }) === 0 &&
		runStatus(tool('tsx'), ['scripts/seed.ts'], { env: e2eEnv }) === 0;
	const port = await freePort();
	stage('End-to-end tests (Playwright, Chromium)', () =>
		prepared ? runStatus(tool('playwright'), ['test'], { env: { ...e2eEnv, E2E_PORT: String(port) } }) : 1
	);
} else {
	results.push({ name: 'End-to-end tests (skipped: the build failed)', ok: false, seconds: 0 });
}

services.stop();
if (pg.started) stopPostgres();

const failed = results.filter((r) => !r.ok);
console.log('\nSummary');
for (const r of results) console.log(`  ${r.ok ? '✓' : '✗'} ${r.name} (${r.seconds.toFixed(1)} s)`);
console.log(`  total ${((Date.now() - started) / 1000).toFixed(0)} s`);
console.log(`\nstages: ${results.length - failed.length} passed, ${failed.length} failed`);
process.exit(failed.length ? 1 : 0);
