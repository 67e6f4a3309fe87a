#!/usr/bin/env node
// Curvelore's own PostgreSQL on loopback: `node scripts/postgres.js ensure|stop|status|url`.
//
// Data lives in .data/postgres (git-ignored); the server listens on 127.0.0.1 only, on
// CURVELORE_PG_PORT (default 54329), with its Unix socket inside the data directory. When we are
// root the server runs as the `postgres` OS user, since PostgreSQL refuses to run as root. When
// DATABASE_URL is set, that server is used and nothing here starts or stops anything.
import { existsSync, mkdirSync, readFileSync, readdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { DATA_DIR, capture, die, ensureDebianPackage, isRoot, portInUse, requireNode, step } from './lib/run.js';

export const PG_PORT = Number(process.env.CURVELORE_PG_PORT ?? 54329);
export const APP_DB = 'curvelore';
export const TEST_DB = 'curvelore_test';
export const E2E_DB = 'curvelore_e2e';
const ROLE = 'curvelore';

// libpq variables would silently redirect psql and pg_ctl to another server.
for (const name of ['PGDATA', 'PGHOST', 'PGPORT', 'PGUSER', 'PGDATABASE', 'PGPASSWORD', 'PGSERVICE']) {
	delete process.env[name];
}

/** The URL of one of our databases on our loopback server. */
export function localUrl(db = APP_DB) {
	return `postgres://${ROLE}@127.0.0.1:${PG_PORT}/${db}`;
}

/** Highest installed server version's bin directory, or null. */
function findBinDir() {
	const base = '/usr/lib/postgresql';
	if (!existsSync(base)) return null;
	const versions = readdirSync(base)
		.filter((v) => existsSync(join(base, v, 'bin', 'postgres')))
		.sort((a, b) => Number(b) - Number(a));
	return versions.length ? join(base, versions[0], 'bin') : null;
}

/**
 * Where the cluster lives: .data/postgres, unless the postgres OS user cannot enter the checkout
 * (a clone under a private home directory, mode 700). Then the cluster is kept in a directory of
 * its own under /var/tmp named after the checkout, and a note says so.
 */
let resolvedDir = null;
function dataDir() {
	if (resolvedDir) return resolvedDir;
	const inCheckout = join(DATA_DIR, 'postgres');
	if (!isRoot() || capture('runuser', ['-u', 'postgres', '--', 'test', '-x', DATA_DIR]).status === 0) {
		resolvedDir = inCheckout;
	} else {
		const id = createHash('sha256').update(DATA_DIR).digest('hex').slice(0, 12);
		resolvedDir = `/var/tmp/curvelore-${id}/postgres`;
		mkdirSync(dirname(resolvedDir), { recursive: true, mode: 0o755 });
		writeFileSync(join(DATA_DIR, 'postgres-location'), resolvedDir + '\n');
	}
	return resolvedDir;
}

/** Runs a server binary as the postgres user when we are root. */
function asServerUser(cmd, args) {
	if (isRoot()) return capture('runuser', ['-u', 'postgres', '--', cmd, ...args]);
	return capture(cmd, args);
}

/** Reads postmaster.pid and reports whether it names a live postgres serving our data directory. */
function liveServer(dir) {
	const pidFile = join(dir, 'postmaster.pid');
	if (!existsSync(pidFile)) return null;
	const lines = readFileSync(pidFile, 'utf8').split('\n');
	const pid = Number(lines[0]);
	const port = Number(lines[3]);
	let ours = false;
	try {
		const cmdline = readFileSync(`/proc/${pid}/cmdline`, 'utf8').split('\0');
		// A reused PID after a reboot may belong to anything; trust it only if it is a postgres
		// started on this very data directory.
		ours = cmdline[0].endsWith('postgres') && cmdline.includes(dir);
	} catch {
		ours = false;
	}
	if (ours) return { pid, port };
	step('Removing a stale postmaster.pid left by a server that is no longer running.');
	rmSync(pidFile, { force: true });
	for (const f of readdirSync(dir)) if (f.startsWith('.s.PGSQL.')) rmSync(join(dir, f), { force: true });
	return null;
}

function initCluster(bin, dir) {
	// initdb into a scratch directory and rename on success, so a failed or interrupted initdb
	// never leaves a half-made cluster that blocks the next run.
	const scratch = `${dir}.init-${process.pid}`;
	rmSync(scratch, { recursive: true, force: true });
	mkdirSync(scratch, { recursive: true, mode: 0o700 });
	if (isRoot()) capture('chown', ['-R', 'postgres:postgres', scratch]);
	step('Creating the database cluster (initdb)…');
	const r = asServerUser(join(bin, 'initdb'), [
		'-D',
		scratch,
		'-U',
		'postgres',
		'--auth=trust',
		'-E',
		'UTF8',
		'--locale=C.UTF-8'
	]);
	if (r.status !== 0) {
		rmSync(scratch, { recursive: true, force: true });
		console.error(r.stderr.trim());
		die('initdb failed (messages above). Nothing was left behind; fix the cause and run again.');
	}
	// Loopback only, trust authentication: this cluster is a local development default.
	writeFileSync(
		join(scratch, 'pg_hba.conf'),
		'local all all trust\nhost all all 127.0.0.1/32 trust\nhost all all ::1/128 trust\n'
	);
	if (isRoot()) capture('chown', ['postgres:postgres', join(scratch, 'pg_hba.conf')]);
	renameSync(scratch, dir);
}

function psql(sql, db = 'postgres') {
	return capture('psql', ['-X', '-q', '-v', 'ON_ERROR_STOP=1', '-h', '127.0.0.1', '-p', String(PG_PORT), '-U', 'postgres', '-d', db, '-tAc', sql]);
}

function ensureRoleAndDatabases() {
	const exists = psql(`select 1 from pg_roles where rolname = '${ROLE}'`);
	if (exists.status !== 0) die(`Cannot connect to PostgreSQL on 127.0.0.1:${PG_PORT}: ${exists.stderr.trim()}`);
	if (exists.stdout.trim() !== '1') psql(`create role ${ROLE} login createdb`);
	for (const db of [APP_DB, TEST_DB, E2E_DB]) {
		const has = psql(`select 1 from pg_database where datname = '${db}'`);
		if (has.stdout.trim() !== '1') {
			const r = psql(`create database ${db} owner ${ROLE}`);
			if (r.status !== 0) die(`Creating database ${db} failed: ${r.stderr.trim()}`);
		}
	}
}

/** Drops and recreates one of our databases (tests reset theirs every run). */
export function resetDatabase(db) {
	if (process.env.DATABASE_URL) return;
	psql(`drop database if exists ${db} with (force)`);
	const r = psql(`create database ${db} owner ${ROLE}`);
	if (r.status !== 0) die(`Recreating database ${db} failed: ${r.stderr.trim()}`);
}

/**
 * Makes sure our server is running and our databases exist. Returns { started } where started
 * is true when this call started the server (so the caller may stop it again).
 */
export async function ensurePostgres() {
	if (process.env.DATABASE_URL) return { started: false, external: true };
	ensureDebianPackage('postgresql', () => findBinDir() !== null, 'The local database');
	const bin = /** @type {string} */ (findBinDir());
	mkdirSync(DATA_DIR, { recursive: true });
	const dir = dataDir();
	if (!dir.startsWith(DATA_DIR)) step(`The postgres user cannot enter this checkout; keeping the database in ${dir}.`);

	if (existsSync(dir) && !existsSync(join(dir, 'PG_VERSION'))) {
		step('Removing an incomplete database directory from an earlier failed start.');
		rmSync(dir, { recursive: true, force: true });
	}
	if (!existsSync(dir)) initCluster(bin, dir);
	if (isRoot()) capture('chown', ['-R', 'postgres:postgres', dir]);

	const live = liveServer(dir);
	if (live) {
		if (live.port !== PG_PORT) {
			die(`Our PostgreSQL is already running on port ${live.port}, not ${PG_PORT}. Stop it with "npm run db -- stop" or set CURVELORE_PG_PORT=${live.port}.`);
		}
		ensureRoleAndDatabases();
		return { started: false, external: false };
	}
	if (await portInUse(PG_PORT)) {
		die(`Port ${PG_PORT} on 127.0.0.1 is in use by another program. Set CURVELORE_PG_PORT to a free port, or stop that program.`);
	}
	if (dir.length + 20 > 107) {
		die(`The checkout path is too long for PostgreSQL's socket (${dir}). Move the checkout to a shorter path.`);
	}
	step(`Starting PostgreSQL on 127.0.0.1:${PG_PORT}…`);
	const log = join(dir, 'server.log');
	const r = asServerUser(join(bin, 'pg_ctl'), [
		'-D',
		dir,
		'-l',
		log,
		'-w',
		'-t',
		'60',
		'-o',
		`-p ${PG_PORT} -c listen_addresses=127.0.0.1 -c unix_socket_directories='${dir}'`,
		'start'
	]);
	if (r.status !== 0) {
		const tail = existsSync(log) ? readFileSync(log, 'utf8').trim().split('\n').slice(-8).join('\n') : r.stderr;
		console.error(tail);
		die(`PostgreSQL failed to start (log above, full log in ${log}). Fix the cause and run again.`);
	}
	ensureRoleAndDatabases();
	return { started: true, external: false };
}

export function stopPostgres() {
	if (process.env.DATABASE_URL) return false;
	const bin = findBinDir();
	const dir = dataDir();
	if (!bin || !existsSync(join(dir, 'PG_VERSION')) || !liveServer(dir)) return false;
	const r = asServerUser(join(bin, 'pg_ctl'), ['-D', dir, '-m', 'fast', '-w', 'stop']);
	return r.status === 0;
}

export function postgresStatus() {
	if (process.env.DATABASE_URL) return { running: null, url: process.env.DATABASE_URL };
	const dir = dataDir();
	const live = existsSync(dir) ? liveServer(dir) : null;
	return { running: Boolean(live), pid: live?.pid, port: live?.port ?? PG_PORT, dataDir: dir, url: localUrl() };
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
	requireNode();
	const command = process.argv[2] ?? 'status';
	if (command === 'ensure' || command === 'start') {
		await ensurePostgres();
		console.log(process.env.DATABASE_URL ? 'Using DATABASE_URL; nothing started.' : `PostgreSQL is running: ${localUrl()}`);
	} else if (command === 'stop') {
		console.log(stopPostgres() ? 'PostgreSQL stopped.' : 'PostgreSQL was not running.');
	} else if (command === 'status') {
		const s = postgresStatus();
		if (s.running === null) console.log(`Using DATABASE_URL (${s.url}); not managed here.`);
		else console.log(s.running ? `running (pid ${s.pid}) on 127.0.0.1:${s.port}, data in ${s.dataDir}\n${s.url}` : `not running (data in ${s.dataDir})`);
	} else if (command === 'url') {
		console.log(process.env.DATABASE_URL ?? localUrl(process.argv[3] ?? APP_DB));
	} else {
		die(`Unknown command "${command}". Use: ensure | stop | status | url [database]`, 2);
	}
}
