// The local stand-ins for hosted services (mail relay, search engine) that `npm start` and
// `npm test` run when no real one is configured. Each is a script that listens on 127.0.0.1 on
// the port(s) it is given in its environment, answers `health` when ready, and exits on SIGTERM.
//
// To add a stand-in, add an entry here:
//   name:     short label for log prefixes
//   enabled:  (env) => whether to run it (usually: the real service's URL is not set)
//   script:   the TypeScript entry point, run with tsx
//   ports:    names of the ports it needs; each gets a free port, passed as STANDIN_PORT_<NAME>
//   env:      (ports) => the variables the app (and tests) need to use it
//   health:   (ports) => a URL that answers once it is ready
import { BIN, ROOT, freePort, startChild, waitForHttp } from './run.js';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';

/** @typedef {{ name: string, enabled: (env: NodeJS.ProcessEnv) => boolean, script: string, ports: string[], env: (ports: Record<string, number>) => Record<string, string>, health: (ports: Record<string, number>) => string }} ServiceDef */

/** @type {ServiceDef[]} */
export const LOCAL_SERVICES = [
	{
		// A real SMTP server on loopback that keeps what it receives; the app shows it at /dev/mailbox.
		name: 'mail',
		enabled: (env) => !env.SMTP_URL,
		script: 'scripts/mail-standin.ts',
		ports: ['SMTP', 'HTTP'],
		env: (ports) => ({
			SMTP_URL: `smtp://127.0.0.1:${ports.SMTP}`,
			DEV_MAILBOX_URL: `http://127.0.0.1:${ports.HTTP}`
		}),
		health: (ports) => `http://127.0.0.1:${ports.HTTP}/health`
	},
	{
		// The search engine's REST subset, in memory (search/standin). It forgets on exit; the app
		// rebuilds the index from the database. Its key is generated per start and left in a file
		// named after its port (search/standin/main.ts), unless MEILISEARCH_KEY is set.
		name: 'search',
		enabled: (env) => !env.MEILISEARCH_URL,
		script: 'search/standin/main.ts',
		ports: ['HTTP'],
		env: (ports) => ({
			MEILISEARCH_URL: `http://127.0.0.1:${ports.HTTP}`,
			MEILISEARCH_KEY: readFileSync(join(ROOT, '.data', `search-standin-${ports.HTTP}.key`), 'utf8').trim()
		}),
		health: (ports) => `http://127.0.0.1:${ports.HTTP}/health`
	}
];

/**
 * Starts every enabled stand-in. Resolves to { env, children, stop } where env holds the
 * variables pointing the app at them.
 */
export async function startLocalServices(baseEnv = process.env) {
	/** @type {Record<string, string>} */
	const env = {};
	/** @type {{ name: string, child: import('node:child_process').ChildProcess }[]} */
	const children = [];
	const stop = () => {
		for (const { child } of children) if (child.exitCode === null) child.kill('SIGTERM');
	};
	for (const service of LOCAL_SERVICES) {
		if (!service.enabled(baseEnv)) continue;
		/** @type {Record<string, number>} */
		const ports = {};
		for (const p of service.ports) ports[p] = await freePort();
		const portEnv = Object.fromEntries(Object.entries(ports).map(([k, v]) => [`STANDIN_PORT_${k}`, String(v)]));
		const child = startChild(service.name, join(BIN, 'tsx'), [service.script], {
			env: { ...baseEnv, ...portEnv }
		});
		children.push({ name: service.name, child });
		const ready = await waitForHttp(service.health(ports), 20_000);
		if (!ready) {
			stop();
			throw new Error(`The local ${service.name} stand-in did not start (see its messages above).`);
		}
		Object.assign(env, service.env(ports));
	}
	return { env, children, stop };
}
