/**
 * `npm run db:migrate` (up to latest), `npm run db:migrate:down` (one step back),
 * `tsx scripts/migrate.ts status`. Uses DATABASE_URL, else our loopback server's app database.
 */
import { createDb } from '../src/lib/server/db/connect';
import { assertMigrated, createMigrator } from '../src/lib/server/db/migrate';

const url = process.env.DATABASE_URL ?? `postgres://curvelore@127.0.0.1:${process.env.CURVELORE_PG_PORT ?? 54329}/curvelore`;
const command = process.argv[2] ?? 'up';
const db = createDb(url, { max: 1 });
const migrator = createMigrator(db);

try {
	if (command === 'up') {
		const result = await migrator.migrateToLatest();
		assertMigrated(result);
		const ran = (result.results ?? []).map((r) => r.migrationName);
		console.log(ran.length ? `Migrated: ${ran.join(', ')}` : 'Database schema is up to date.');
	} else if (command === 'down') {
		const result = await migrator.migrateDown();
		assertMigrated(result);
		const ran = (result.results ?? []).map((r) => r.migrationName);
		console.log(ran.length ? `Reverted: ${ran.join(', ')}` : 'Nothing to revert.');
	} else if (command === 'status') {
		for (const m of await migrator.getMigrations()) {
			console.log(`${m.executedAt ? 'applied' : 'pending'}  ${m.name}`);
		}
	} else {
		console.error(`Unknown command "${command}". Use: up | down | status`);
		process.exitCode = 2;
	}
} catch (e) {
	const message = e instanceof Error ? e.message : String(e);
	console.error(
		/ECONNREFUSED|ENOTFOUND|timeout/i.test(message)
			? `✗ Cannot reach the database at ${url.replace(/\/\/[^@]*@/, '//…@')}: ${message}. Is it running? (npm run db -- status)`
			: `✗ ${message}`
	);
	process.exitCode = 1;
} finally {
	await db.destroy();
}
