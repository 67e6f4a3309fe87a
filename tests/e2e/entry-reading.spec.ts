import { expect, test } from '@playwright/test';
import { signIn } from './support/sign-in';

test('the entry table filters in place, and the same address works without JavaScript', async ({ page, browser }) => {
	await signIn(page, 'pim.contributor@fernhollow.example');
	await page.goto('/o/fernhollow/entries');
	const table = page.getByTestId('entry-table');
	await expect(table).toBeVisible();
	// A marker on the window survives only if the page is not reloaded.
	await page.evaluate(() => ((window as unknown as { stillHere: boolean }).stillHere = true));
	await page.getByLabel('Component kind').selectOption('zener');
	await expect(page).toHaveURL(/\/entries\?kind=zener$/);
	await expect(table.getByRole('link', { name: 'Reference zener D9 reads 3.9 V instead of 5.1 V' })).toBeVisible();
	await expect(table.getByText('Relay coil K1 resistance too high')).toHaveCount(0);
	expect(await page.evaluate(() => (window as unknown as { stillHere?: boolean }).stillHere)).toBe(true);
	const rows = await table.locator('tbody tr a.font-semibold').allTextContents();

	// The shared address, opened by a browser without script, gives the same rows.
	const noScript = await browser.newContext({ javaScriptEnabled: false, storageState: await page.context().storageState() });
	const plain = await noScript.newPage();
	await plain.goto(page.url());
	await expect(plain.getByTestId('entry-table')).toBeVisible();
	expect(await plain.getByTestId('entry-table').locator('tbody tr a.font-semibold').allTextContents()).toEqual(rows);
	await noScript.close();
});

test('an entry shows its plot, its analysis and a text summary of the plot', async ({ page }) => {
	await signIn(page, 'pim.contributor@fernhollow.example');
	await page.goto('/o/fernhollow/entries?kind=diode');
	await page.getByTestId('entry-table').getByRole('link', { name: 'Bootstrap diode D5 leaky' }).click();
	await expect(page.getByRole('heading', { name: 'Bootstrap diode D5 leaky' })).toBeVisible();
	await expect(page.locator('canvas').first()).toBeVisible();
	await expect(page.getByText(/V-I plot at 10 V · 1 kΩ · 60 Hz/).first()).toBeAttached();
	await expect(page.getByTestId('trace-class').first()).toHaveText('junction');
	await page.getByRole('link', { name: 'History' }).click();
	await expect(page.getByRole('heading', { name: 'History' })).toBeVisible();
	await expect(page.getByTestId('revision-list').getByRole('listitem')).toHaveCount(1);
});

test('the entry table is a card list on a 390 px phone, and nothing scrolls sideways', async ({ page }) => {
	await page.setViewportSize({ width: 390, height: 800 });
	await signIn(page, 'pim.contributor@fernhollow.example', { redirectTo: '/o/fernhollow/entries?kind=diode' });
	await expect(page.getByTestId('entry-cards').getByRole('listitem').first()).toBeVisible();
	await expect(page.getByTestId('entry-table')).toBeHidden();
	// The top bar (sections, organisation switcher, account menu) must fit as well as the list.
	expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
});
