import { readdir } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { type Kysely, type Migration, type MigrationProvider, type MigrationResultSet, Migrator } from 'kysely';

export const MIGRATIONS_DIR = path.resolve(
	path.dirname(fileURLToPath(import.meta.url)),
	'../../../../migrations'
);

/**
 * Loads every migrations/*.ts file. Unlike Kysely's FileMigrationProvider, the dynamic import
 * happens in this module, so whatever loads our code (tsx in scripts, Vite in tests) also
 * compiles the TypeScript migrations; Node 20 cannot import `.ts` on its own.
 */
class TypeScriptMigrationProvider implements MigrationProvider {
	constructor(private readonly folder: string) {}

	async getMigrations(): Promise<Record<string, Migration>> {
		const files = (await readdir(this.folder)).filter((f) => /\.(ts|js)$/.test(f) && !f.endsWith('.d.ts'));
		const migrations: Record<string, Migration> = {};
		for (const file of files) {
			const mod = (await import(/* @vite-ignore */ pathToFileURL(path.join(this.folder, file)).href)) as Migration;
			migrations[file.replace(/\.(ts|js)$/, '')] = { up: mod.up, down: mod.down };
		}
		return migrations;
	}
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any
export function createMigrator(db: Kysely<any>, folder = MIGRATIONS_DIR): Migrator {
	return new Migrator({
		// Migrations run on a plugin-free instance: they name columns in SQL's snake_case.
		db: db.withoutPlugins(),
		provider: new TypeScriptMigrationProvider(folder)
	});
}

/** Throws with every failed migration's name when a run does not succeed. */
export function assertMigrated({ error, results }: MigrationResultSet): void {
	if (!error) return;
	const failed = (results ?? []).filter((r) => r.status === 'Error').map((r) => r.migrationName);
	const cause = error instanceof Error ? error.message : String(error);
	throw new Error(`Migration ${failed.join(', ') || 'run'} failed: ${cause}`);
}
