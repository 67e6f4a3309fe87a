import { type ChildProcess, spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import net from 'node:net';
import type { Kysely } from 'kysely';
import type { Database } from '../../../src/lib/server/db/connect';
import { ensureUser } from '../../../src/lib/server/auth/users';
import { authTables } from '../../../src/lib/server/auth/tables';

/**
 * The real app for route-level tests: `vite dev` in a child process against the test database,
 * reached over HTTP, so every request goes through the hooks, the param matchers, the guard, the
 * loads, the form actions and the endpoints exactly as in production (SvelteKit's Origin check
 * included). Sign-in is a real Auth.js database session: a "Session" row plus its cookie.
 */
export interface AppServer {
	url: string;
	stop: () => Promise<void>;
}

function freePort(): Promise<number> {
	return new Promise((resolve, reject) => {
		const server = net.createServer();
		server.once('error', reject);
		server.listen(0, '127.0.0.1', () => {
			const { port } = server.address() as net.AddressInfo;
			server.close(() => resolve(port));
		});
	});
}

export async function startAppServer(env: Record<string, string>): Promise<AppServer> {
	const port = await freePort();
	const url = `http://localhost:${port}`;
	const child: ChildProcess = spawn('node_modules/.bin/vite', ['dev', '--port', String(port), '--strictPort', '--host', '127.0.0.1'], {
		env: { ...process.env, ...env, ORIGIN: url, NODE_ENV: 'development' },
		stdio: ['ignore', 'pipe', 'pipe'],
		detached: true
	});
	let output = '';
	child.stdout?.on('data', (d) => (output += String(d)));
	child.stderr?.on('data', (d) => (output += String(d)));
	const stop = async () => {
		if (child.exitCode !== null || !child.pid) return;
		const exited = new Promise((r) => child.once('exit', r));
		try {
			process.kill(-child.pid, 'SIGTERM');
		} catch {
			/* already gone */
		}
		await Promise.race([exited, new Promise((r) => setTimeout(r, 3000))]);
	};
	const deadline = Date.now() + 60_000;
	while (Date.now() < deadline) {
		if (child.exitCode !== null) break;
		try {
			const res = await fetch(`http://127.0.0.1:${port}/api/health`);
			if (res.ok) return { url, stop };
		} catch {
			/* not listening yet */
		}
		await new Promise((r) => setTimeout(r, 250));
	}
	await stop();
	throw new Error(`The app did not start for the route tests:\n${output.slice(-3000)}`);
}

/** Auth.js's session cookie name on plain http. */
export const SESSION_COOKIE = 'authjs.session-token';

/** A signed-in browser for `email`: the user (created if new) and a fresh database session. */
export async function sessionFor(db: Kysely<Database>, email: string, name?: string): Promise<{ userId: string; cookie: string }> {
	const user = await ensureUser(db, { email, name: name ?? null });
	const token = randomBytes(32).toString('hex');
	await authTables(db)
		.insertInto('Session')
		.values({ id: crypto.randomUUID(), sessionToken: token, userId: user.id, expires: new Date(Date.now() + 86_400_000) })
		.execute();
	return { userId: user.id, cookie: `${SESSION_COOKIE}=${token}` };
}

export interface Caller {
	cookie?: string;
	bearer?: string;
}

export interface Reply {
	status: number;
	location: string | null;
	text: string;
	json: () => unknown;
}

/**
 * One request as a browser without script (forms post url-encoded with the page's Origin) or a
 * script with a bearer token. Redirects are not followed, so their status can be checked.
 */
export async function call(
	app: AppServer,
	who: Caller,
	method: string,
	path: string,
	body?: Record<string, string> | { json: unknown } | FormData
): Promise<Reply> {
	const headers: Record<string, string> = { origin: app.url };
	if (who.cookie) headers.cookie = who.cookie;
	if (who.bearer) headers.authorization = `Bearer ${who.bearer}`;
	let payload: string | FormData | undefined;
	if (body instanceof FormData) {
		// A file upload: a form post to a page, or a script's multipart call to the API.
		headers.accept = path.startsWith('/api/') ? 'application/json' : 'text/html,application/xhtml+xml';
		payload = body;
	} else if (body && 'json' in body) {
		headers['content-type'] = 'application/json';
		payload = JSON.stringify(body.json);
	} else if (body) {
		// What a browser without script sends: SvelteKit answers such a post with the rendered page.
		headers.accept = 'text/html,application/xhtml+xml';
		headers['content-type'] = 'application/x-www-form-urlencoded';
		payload = new URLSearchParams(body as Record<string, string>).toString();
	} else if (method === 'DELETE' || method === 'PATCH' || method === 'PUT') {
		// Forms never send these: this is a script calling the API.
		headers.accept = 'application/json';
	} else if (method !== 'GET') {
		headers.accept = 'text/html,application/xhtml+xml';
		headers['content-type'] = 'application/x-www-form-urlencoded';
		payload = '';
	}
	const res = await fetch(`${app.url}${path}`, { method, headers, body: payload, redirect: 'manual' });
	const text = await res.text();
	return { status: res.status, location: res.headers.get('location'), text, json: () => JSON.parse(text) };
}
