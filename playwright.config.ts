import { defineConfig, devices } from '@playwright/test';

const port = Number(process.env.E2E_PORT ?? 4173);
const baseURL = `http://localhost:${port}`;

export default defineConfig({
	testDir: 'tests/e2e',
	outputDir: 'test-output/e2e',
	forbidOnly: !!process.env.CI,
	retries: process.env.CI ? 2 : 0,
	workers: 1,
	reporter: [['list']],
	use: {
		baseURL,
		trace: 'on-first-retry',
		screenshot: 'only-on-failure'
	},
	projects: [
		{
			name: 'chromium',
			use: {
				...devices['Desktop Chrome'],
				launchOptions: {
					// Debian's Chromium; Playwright never downloads a browser of its own here.
					executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
					args: [
						'--headless',
						'--no-sandbox',
						'--disable-gpu',
						'--disable-background-networking',
						'--disable-component-update',
						'--disable-sync',
						'--no-first-run',
						'--disable-quic'
					]
				}
			}
		}
	],
	webServer: {
		// The production build, as `npm start` serves it (npm test builds it first).
		command: 'node build/index.js',
		url: `${baseURL}/api/health`,
		reuseExistingServer: false,
		timeout: 30_000,
		stdout: 'pipe',
		stderr: 'pipe',
		env: {
			...(process.env as Record<string, string>),
			HOST: '127.0.0.1',
			PORT: String(port),
			ORIGIN: baseURL,
			// Captures may be up to 20 MB; our endpoints enforce their own limits while streaming.
			BODY_SIZE_LIMIT: '25M',
			NODE_ENV: 'production'
		}
	}
});
