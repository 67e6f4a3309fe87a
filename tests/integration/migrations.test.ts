import { NO_MIGRATIONS, sql } from 'kysely';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { assertMigrated, createMigrator } from '../../src/lib/server/db/migrate';
import { seedDemo, DEMO_ORGANISATION } from '../../src/lib/server/demo/seed';
import { DEMO_ENTRY_COUNT } from '../../src/lib/server/demo/entries';
import { COMPONENT_KINDS } from '../../src/lib/schemas/entries';
import { openTestDb, truncateAll } from './setup-db';
import { createDb } from '../../src/lib/server/db/connect';
import { databaseStatus } from '../../src/lib/server/db/status';

const db = openTestDb();
afterAll(() => db.destroy());
beforeEach(() => truncateAll(db));

async function tables(): Promise<string[]> {
	const { rows } = await sql<{ t: string }>`
		select tablename as t from pg_tables where schemaname = 'public' and tablename not like 'kysely_migration%'
		order by tablename
	`.execute(db);
	return rows.map((r) => r.t);
}

describe('migrations', () => {
	it('go all the way down and back up again on the real server', async () => {
		const migrator = createMigrator(db);
		const all = await migrator.getMigrations();
		expect(all.length).toBeGreaterThan(0);
		expect(all.every((m) => m.executedAt)).toBe(true);
		const before = await tables();
		expect(before).toContain('organisation');

		assertMigrated(await migrator.migrateTo(NO_MIGRATIONS));
		expect(await tables()).toEqual([]);

		assertMigrated(await migrator.migrateToLatest());
		expect(await tables()).toEqual(before);
	});
});

describe('organisation table', () => {
	it('round-trips a row through Kysely with camelCase columns', async () => {
		const inserted = await db
			.insertInto('organisation')
			.values({ slug: 'bench-one', name: 'Bench One' })
			.returning(['id', 'createdAt'])
			.executeTakeFirstOrThrow();
		expect(inserted.id).toMatch(/^[0-9a-f-]{36}$/);
		expect(inserted.createdAt).toBeInstanceOf(Date);
		const found = await db.selectFrom('organisation').selectAll().where('id', '=', inserted.id).executeTakeFirst();
		expect(found).toMatchObject({ slug: 'bench-one', name: 'Bench One' });
	});

	it('refuses a duplicate slug and a malformed one at the database level', async () => {
		await db.insertInto('organisation').values({ slug: 'dup', name: 'A' }).execute();
		await expect(db.insertInto('organisation').values({ slug: 'dup', name: 'B' }).execute()).rejects.toMatchObject({ code: '23505' });
		await expect(db.insertInto('organisation').values({ slug: 'Bad Slug', name: 'C' }).execute()).rejects.toMatchObject({ code: '23514' });
	});
});

describe('seedDemo', () => {
	it('seeds an empty database once and leaves it alone afterwards', async () => {
		expect(await seedDemo(db)).toBe(true);
		expect(await seedDemo(db)).toBe(false);
		const orgs = await db.selectFrom('organisation').select('slug').execute();
		expect(orgs.map((o) => o.slug)).toContain(DEMO_ORGANISATION.slug);
	});

	it('seeds entries over every component kind and every review state, each with a stored fault capture', async () => {
		await seedDemo(db);
		const entries = await db.selectFrom('entry').select(['id', 'componentKind', 'status']).execute();
		expect(entries).toHaveLength(DEMO_ENTRY_COUNT);
		expect(new Set(entries.map((e) => e.componentKind))).toEqual(new Set(COMPONENT_KINDS));
		expect(new Set(entries.map((e) => e.status))).toEqual(new Set(['draft', 'in_review', 'published', 'archived']));
		const faults = await db.selectFrom('trace').select(['entryId', 'class', 'fileName']).where('role', '=', 'fault').execute();
		expect(new Set(faults.map((t) => t.entryId))).toEqual(new Set(entries.map((e) => e.id)));
		expect(faults.every((t) => t.fileName?.endsWith('.csv'))).toBe(true);
		// The fault curves themselves cover the classes a technician meets on a bench.
		expect(new Set(faults.map((t) => t.class))).toEqual(
			new Set(['open', 'short', 'resistive', 'capacitive', 'inductive', 'junction', 'zener'])
		);
		const outbox = await db.selectFrom('searchOutbox').select('entityId').execute();
		expect(new Set(outbox.map((o) => o.entityId))).toEqual(new Set(entries.map((e) => e.id)));
	});
});

describe('databaseStatus', () => {
	it('reports the newest applied migration on the real server', async () => {
		const status = await databaseStatus(db);
		const newest = (await createMigrator(db).getMigrations()).map((m) => m.name).sort().at(-1);
		expect(status).toEqual({ reachable: true, migration: newest });
	});

	it('reports an unreachable server as such instead of throwing', async () => {
		// Port 1 on loopback: nothing listens there, so the connection is refused at once.
		const down = createDb('postgres://nobody@127.0.0.1:1/none', { max: 1 });
		try {
			expect(await databaseStatus(down)).toEqual({ reachable: false, migration: null });
		} finally {
			await down.destroy();
		}
	});
});
