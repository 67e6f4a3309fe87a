import { promises as fs } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { FileMigrationProvider, type Kysely, Migrator, type MigrationResultSet } from 'kysely';

export const MIGRATIONS_DIR = path.resolve(
	path.dirname(fileURLToPath(import.meta.url)),
	'../../../../migrations'
);

// eslint-disable-next-line @typescript-eslint/no-explicit-any
export function createMigrator(db: Kysely<any>, folder = MIGRATIONS_DIR): Migrator {
	return new Migrator({
		// Migrations run on a plugin-free instance: they name columns in SQL's snake_case.
		db: db.withoutPlugins(),
		provider: new FileMigrationProvider({ fs, path, migrationFolder: folder })
	});
}

/** Throws with every failed migration's name when a run does not succeed. */
export function assertMigrated({ error, results }: MigrationResultSet): void {
	if (!error) return;
	const failed = (results ?? []).filter((r) => r.status === 'Error').map((r) => r.migrationName);
	const cause = error instanceof Error ? error.message : String(error);
	throw new Error(`Migration ${failed.join(', ') || 'run'} failed: ${cause}`);
}
