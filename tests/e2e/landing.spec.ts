import { expect, test } from '@playwright/test';

test('the landing page states the job, shows the safety caution and uses the bundled font', async ({ page }) => {
	await page.goto('/');
	await expect(page.getByRole('heading', { level: 1 })).toContainText('someone on your team has seen it before');
	const caution = page.getByTestId('safety-caution');
	await expect(caution).toBeVisible();
	await expect(caution).toContainText('unpowered and discharged');
	await expect(caution).toContainText('mains voltage');
	// Signed out, the way in is on the page itself.
	await expect(page.getByRole('main').getByRole('link', { name: 'Sign in' })).toHaveAttribute('href', '/login');

	// The font is served by the app itself (no CDN) and actually loads.
	const loaded = await page.evaluate(async () => {
		await document.fonts.ready;
		return document.fonts.check('16px "Atkinson Hyperlegible Next Variable"') &&
			[...document.fonts].some((f) => f.family.includes('Atkinson Hyperlegible Next') && f.status === 'loaded');
	});
	expect(loaded).toBe(true);
	await expect(page.getByRole('banner')).toBeVisible();
	await expect(page.getByRole('main')).toBeVisible();
	await expect(page.getByRole('contentinfo')).toContainText('Curvelore');

	await page.screenshot({ path: 'test-output/screenshots/landing.png', fullPage: true });
});

test('keyboard focus is visible: the first Tab lands on the skip link with an outline', async ({ page }) => {
	await page.goto('/');
	await page.keyboard.press('Tab');
	const focused = page.locator(':focus');
	await expect(focused).toHaveText('Skip to content');
	const outline = await focused.evaluate((el) => getComputedStyle(el).outlineStyle + ' ' + getComputedStyle(el).outlineWidth);
	expect(outline).toMatch(/^solid [1-9]/);
	await page.keyboard.press('Enter');
	await expect(page).toHaveURL(/#main$/);
});

test('the health endpoint reports the version, the database and the migration level', async ({ request }) => {
	const res = await request.get('/api/health');
	expect(res.status()).toBe(200);
	const body = await res.json();
	expect(body).toMatchObject({ status: 'ok', database: { reachable: true } });
	expect(body.version).toMatch(/^\d+\.\d+\.\d+/);
	expect(body.database.migration).toMatch(/^\d{4}_\d{2}_\d{2}_/);
});

test('an unknown address gets the styled 404 page', async ({ page }) => {
	const res = await page.goto('/no/such/page');
	expect(res?.status()).toBe(404);
	await expect(page.getByRole('heading', { level: 1 })).toHaveText('There is nothing at this address');
	await expect(page.getByRole('link', { name: 'Back to the start' })).toBeVisible();
});
