/** `npm run db:seed`: seeds the demo organisation into an empty database (idempotent). */
import { createDb } from '../src/lib/server/db/connect';
import { seedDemo } from '../src/lib/server/demo/seed';

const url = process.env.DATABASE_URL ?? `postgres://curvelore@127.0.0.1:${process.env.CURVELORE_PG_PORT ?? 54329}/curvelore`;
const db = createDb(url, { max: 1 });
try {
	const seeded = await seedDemo(db);
	console.log(seeded ? '→ Seeded the demo organisation.' : '→ Demo data: the database already has organisations; left as is.');
} catch (e) {
	console.error(`✗ Seeding failed: ${e instanceof Error ? e.message : e}`);
	process.exitCode = 1;
} finally {
	await db.destroy();
}
