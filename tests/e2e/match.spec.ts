import { execFileSync } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { expect, test } from '@playwright/test';
import { signIn } from './support/sign-in';

/**
 * A newcomer's path through "match a capture": simulate a faulty part with the engine's command
 * line, exactly as the README shows, upload the file, see it read in the browser, match it, and
 * find the demo entry about that fault on top. The part is the demo's "Leaky electrolytic C8 on
 * the 12 V rail" (src/lib/server/demo/entries.ts): 4.7 µF with about 2.2 kΩ of leakage, measured
 * at 10 V · 1 kΩ · 60 Hz.
 */
const TITLE = 'Leaky electrolytic C8 on the 12 V rail';
const AUTHOR = 'teodor.author@fernhollow.example';

function simulatedCapture(points = 256): string {
	const dir = join('test-output', 'e2e-match');
	mkdirSync(dir, { recursive: true });
	const model = join(dir, 'leaky-cap.json');
	writeFileSync(model, JSON.stringify({ kind: 'parallel', parts: [{ kind: 'capacitor', farads: 4.7e-6 }, { kind: 'resistor', ohms: 2200 }] }));
	// `npm run --silent signature -- simulate …` runs this same script through tsx.
	const csv = execFileSync('node_modules/.bin/tsx', ['scripts/signature.ts', 'simulate', '--model', model, '--vs', '10', '--rs', '1k', '--f', '60', '--points', String(points), '--csv'], {
		encoding: 'utf8',
		maxBuffer: 64 * 1024 * 1024
	});
	const file = join(dir, `leaky-cap-${points}.csv`);
	writeFileSync(file, csv);
	return file;
}

async function setConditions(page: import('@playwright/test').Page) {
	await page.getByLabel(/Source peak voltage Vs/).fill('10');
	await page.getByLabel(/Source resistance Rs/).fill('1000');
	await page.getByLabel(/Frequency f/).fill('60');
}

test('a simulated leaky capacitor finds its demo entry, previewed before matching, and the conditions are remembered', async ({ page }) => {
	const file = simulatedCapture();
	await page.setViewportSize({ width: 390, height: 844 });
	// Signed in, the start page lists the newcomer's organisation with the way in.
	await signIn(page, AUTHOR);
	await page.goto('/');
	const mine = page.getByRole('region', { name: 'Your organisations' });
	await expect(mine.getByRole('link', { name: 'Fernhollow Drive & Supply Repairs (demo)' })).toBeVisible();
	await mine.getByRole('link', { name: 'Match a capture' }).click();
	await expect(page).toHaveURL(/\/o\/fernhollow\/match$/);
	await expect(page.getByRole('heading', { name: 'Match a capture' })).toBeVisible();
	await expect(page.getByTestId('safety-caution')).toBeVisible();
	await setConditions(page);

	await page.getByLabel('Capture file').setInputFiles(file);
	// Read in the browser before anything is sent: a leaky capacitor reads as capacitive (phasor fit).
	const preview = page.getByTestId('capture-preview');
	await expect(preview).toBeVisible();
	await expect(preview.getByTestId('analysis')).toContainText('capacitive');
	await expect(page.getByTestId('match-results')).toHaveCount(0);

	await page.getByRole('button', { name: 'Match', exact: true }).click();
	const first = page.getByTestId('match-card').first();
	await expect(first.getByTestId('match-title')).toHaveText(TITLE);
	// The overlay: one interactive plot holding both curves on the capture's axes.
	await expect(first.getByTestId('signature-plot').locator('canvas').first()).toBeVisible();
	const legend = first.getByRole('list', { name: 'Legend' });
	await expect(legend.getByRole('listitem')).toHaveText([/Capture\s*your capture/, /Fault\s*stored/]);
	const similarity = Number((await first.getByTestId('match-similarity').innerText()).match(/\d+/)?.[0]);
	expect(similarity).toBeGreaterThan(50);
	await expect(first.getByTestId('not-comparable')).toHaveCount(0);
	await expect(first.getByRole('link', { name: /Open entry/ })).toHaveAttribute('href', /^\/o\/fernhollow\/entries\/[0-9a-f-]{36}$/);

	// A 390 px phone (set before matching, as a phone would render it): nothing scrolls sideways.
	expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
	await page.screenshot({ path: 'test-output/e2e-match/results-phone.png', fullPage: true });

	await page.reload();
	await expect(page.getByText('Filled in from your last match here')).toBeVisible();
	await expect(page.getByLabel(/Source peak voltage Vs/)).toHaveValue('10');
	await expect(page.getByLabel(/Source resistance Rs/)).toHaveValue('1000');
	await expect(page.getByLabel(/Frequency f/)).toHaveValue('60');
	await page.screenshot({ path: 'test-output/e2e-match/match.png', fullPage: true });
});

test('a large capture is read in a worker thread, and still previews and matches', async ({ page }) => {
	// 40 000 rows (about 1.4 MB): past the size from which the browser reads captures off the page's thread.
	const file = simulatedCapture(40_000);
	await signIn(page, AUTHOR, { redirectTo: '/o/fernhollow/match' });
	await setConditions(page);
	const worker = page.waitForEvent('worker');
	await page.getByLabel('Capture file').setInputFiles(file);
	await worker;
	const preview = page.getByTestId('capture-preview');
	await expect(preview.getByTestId('analysis')).toContainText('capacitive');
	await page.getByRole('button', { name: 'Match', exact: true }).click();
	await expect(page.getByTestId('match-card').first().getByTestId('match-title')).toHaveText(TITLE);
});

test('a file that is too large is refused in the browser before any upload', async ({ page }) => {
	await signIn(page, AUTHOR, { redirectTo: '/o/fernhollow/match' });
	const uploads: string[] = [];
	page.on('request', (r) => r.method() === 'POST' && uploads.push(r.url()));
	await page.getByLabel('Capture file').setInputFiles({ name: 'huge.csv', mimeType: 'text/csv', buffer: Buffer.alloc(21 * 1024 * 1024, 0x31) });
	await expect(page.getByTestId('capture-error')).toContainText('at most 20 MB');
	expect(uploads).toEqual([]);
});

test.describe('without JavaScript', () => {
	test.use({ javaScriptEnabled: false });

	test('the plain form matches and renders the cards with a static plot', async ({ page }) => {
		const file = simulatedCapture();
		await signIn(page, AUTHOR, { redirectTo: '/o/fernhollow/match' });
		await setConditions(page);
		await page.getByLabel('Capture file').setInputFiles(file);
		await page.getByRole('button', { name: 'Match', exact: true }).click();
		const first = page.getByTestId('match-card').first();
		await expect(first.getByTestId('match-title')).toHaveText(TITLE);
		await expect(first.getByTestId('static-plot').locator('polygon')).toHaveCount(2);
	});
});
