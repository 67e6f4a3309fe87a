/**
 * Runs the local mail stand-in on 127.0.0.1: SMTP on $STANDIN_PORT_SMTP, its JSON API on
 * $STANDIN_PORT_HTTP. Started by `npm start` and `npm test` (scripts/lib/services.js).
 */
import { startMailStandin } from './lib/mail-standin';

function port(name: string): number {
	const value = Number(process.env[name]);
	if (!Number.isInteger(value) || value < 1 || value > 65535) {
		console.error(`${name} must be a port number, not "${process.env[name] ?? ''}".`);
		process.exit(2);
	}
	return value;
}

const standin = await startMailStandin({ smtpPort: port('STANDIN_PORT_SMTP'), httpPort: port('STANDIN_PORT_HTTP') });
console.log(`Local mail stand-in: SMTP on 127.0.0.1:${standin.smtpPort}, messages at http://127.0.0.1:${standin.httpPort}/messages`);

const stop = () => {
	void standin.close().then(() => process.exit(0));
	setTimeout(() => process.exit(0), 2000).unref();
};
process.on('SIGTERM', stop);
process.on('SIGINT', stop);
