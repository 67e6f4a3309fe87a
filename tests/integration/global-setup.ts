import { execFileSync } from 'node:child_process';
import { testDatabaseUrl } from './setup-db';

/**
 * Migrates the test database once before the integration files run. Global setup runs outside
 * Vite's module runner, so the migrations run through the same script `npm start` uses.
 */
export default function setup(): void {
	execFileSync('node_modules/.bin/tsx', ['scripts/migrate.ts', 'up'], {
		env: { ...process.env, DATABASE_URL: testDatabaseUrl() },
		stdio: 'inherit'
	});
}
