// Small process helpers shared by the start, test and service scripts. Plain Node, no
// dependencies: these run before `npm ci` has installed anything.
import { spawn, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import net from 'node:net';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
export const DATA_DIR = join(ROOT, '.data');
export const BIN = join(ROOT, 'node_modules', '.bin');

/** One clear line on stderr, then exit non-zero. */
export function die(message, code = 1) {
	console.error(`✗ ${message}`);
	process.exit(code);
}

export function step(message) {
	console.log(`→ ${message}`);
}

/** Checks the running Node against package.json's engines field before anything else happens. */
export function requireNode() {
	const [major, minor] = process.versions.node.split('.').map(Number);
	if (major < 20 || (major === 20 && minor < 19)) {
		die(
			`Curvelore needs Node.js 20.19 or newer; this is ${process.version}. Install a newer Node.js and run the command again.`
		);
	}
}

/** Runs a command to completion with inherited output; returns its exit status. */
export function runStatus(cmd, args, options = {}) {
	const r = spawnSync(cmd, args, { stdio: 'inherit', cwd: ROOT, ...options });
	if (r.error) return 127;
	return r.status ?? 1;
}

/** Runs a command and dies with `failure` when it does not succeed. */
export function runOrDie(cmd, args, failure, options = {}) {
	const status = runStatus(cmd, args, options);
	if (status !== 0) die(failure);
}

/** Runs a command quietly and returns { status, stdout, stderr }. */
export function capture(cmd, args, options = {}) {
	const r = spawnSync(cmd, args, { encoding: 'utf8', cwd: ROOT, ...options });
	return { status: r.error ? 127 : (r.status ?? 1), stdout: r.stdout ?? '', stderr: r.stderr ?? '' };
}

export function which(cmd) {
	const r = capture('sh', ['-c', `command -v ${cmd}`]);
	return r.status === 0 ? r.stdout.trim() : null;
}

/** Resolves true when something accepts TCP connections on host:port. */
export function portInUse(port, host = '127.0.0.1') {
	return new Promise((resolve) => {
		const socket = net.connect({ port, host });
		socket.setTimeout(1000);
		socket.once('connect', () => {
			socket.destroy();
			resolve(true);
		});
		socket.once('timeout', () => {
			socket.destroy();
			resolve(false);
		});
		socket.once('error', () => resolve(false));
	});
}

/** Resolves a free TCP port on 127.0.0.1 chosen by the kernel. */
export function freePort() {
	return new Promise((resolve, reject) => {
		const server = net.createServer();
		server.once('error', reject);
		server.listen(0, '127.0.0.1', () => {
			const { port } = /** @type {import('node:net').AddressInfo} */ (server.address());
			server.close(() => resolve(port));
		});
	});
}

export function ensureDataDir() {
	mkdirSync(DATA_DIR, { recursive: true });
	return DATA_DIR;
}

/**
 * Installs dependencies with `npm ci` when node_modules is missing or was installed from a
 * different package-lock.json than the one checked out.
 */
export function ensureDependencies() {
	const lock = join(ROOT, 'package-lock.json');
	const stamp = join(ROOT, 'node_modules', '.curvelore-lock-sha256');
	const want = createHash('sha256').update(readFileSync(lock)).digest('hex');
	const have = existsSync(stamp) ? readFileSync(stamp, 'utf8').trim() : '';
	if (have === want && existsSync(join(BIN, 'vite'))) return;
	step('Installing dependencies (npm ci)…');
	runOrDie(
		'npm',
		['ci', '--no-audit', '--no-fund', '--loglevel=error'],
		'npm ci failed. Check the network connection to the npm registry and run the command again.'
	);
	writeFileSync(stamp, want + '\n');
}

/** True when we may use apt-get without sudo. */
export function isRoot() {
	return typeof process.getuid === 'function' && process.getuid() === 0;
}

let aptUpdated = false;

/**
 * Installs Debian packages that provide `probe` (a path or command) when it is missing.
 * Tries without `apt-get update` first, since that is slow and usually unnecessary.
 */
export function ensureDebianPackage(pkg, isPresent, purpose) {
	if (isPresent()) return;
	if (!which('apt-get')) die(`${purpose} needs Debian's ${pkg} package, and apt-get is not available. Install ${pkg} and run again.`);
	if (!isRoot()) die(`${purpose} needs Debian's ${pkg} package. Install it with: sudo apt-get install -y ${pkg}`);
	step(`Installing Debian's ${pkg} (${purpose})…`);
	const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
	const install = () =>
		runStatus('apt-get', ['install', '-y', '-q', pkg], { env, stdio: ['ignore', 'ignore', 'inherit'] });
	let status = aptUpdated ? install() : 1;
	if (status !== 0 || !isPresent()) {
		if (!aptUpdated) {
			runStatus('apt-get', ['update', '-q'], { env, stdio: ['ignore', 'ignore', 'inherit'] });
			aptUpdated = true;
		}
		status = install();
	}
	if (status !== 0 || !isPresent()) die(`Installing ${pkg} with apt-get failed; see the messages above.`);
}

/** Spawns a long-running child with prefixed output; returns the ChildProcess. */
export function startChild(name, cmd, args, options = {}) {
	const child = spawn(cmd, args, { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'], ...options });
	const prefix = (stream, out) => {
		let buffer = '';
		stream?.on('data', (chunk) => {
			buffer += chunk;
			const lines = buffer.split('\n');
			buffer = lines.pop() ?? '';
			for (const line of lines) out.write(`[${name}] ${line}\n`);
		});
	};
	prefix(child.stdout, process.stdout);
	prefix(child.stderr, process.stderr);
	return child;
}

/** Polls `url` until it answers (any HTTP status) or the timeout passes. */
export async function waitForHttp(url, timeoutMs = 30_000) {
	const deadline = Date.now() + timeoutMs;
	while (Date.now() < deadline) {
		try {
			const res = await fetch(url);
			return res;
		} catch {
			await new Promise((r) => setTimeout(r, 200));
		}
	}
	return null;
}
