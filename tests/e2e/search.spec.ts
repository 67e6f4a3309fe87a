import { expect, test } from '@playwright/test';
import { signIn } from './support/sign-in';

// The demo entries are in src/lib/server/demo/entries.ts; the texts below are theirs.
const GATE_OXIDE = 'Gate oxide punctured on MOSFET Q3';
const LEAKY_C8 = 'Leaky electrolytic C8 on the 12 V rail';

test('results follow the typing, typos and all, and the keyboard opens one', async ({ page }) => {
	await signIn(page, 'teodor.author@fernhollow.example', { redirectTo: '/o/fernhollow' });
	await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Search' }).click();
	await expect(page.getByTestId('search-empty')).toBeVisible();

	const box = page.getByLabel('What do you see?');
	// "ohmeter": a letter short. Typed key by key and never submitted.
	await box.pressSequentially('reads short but ohmeter says 40', { delay: 40 });
	const hits = page.getByTestId('search-hit');
	await expect(hits.filter({ hasText: GATE_OXIDE })).toBeVisible();
	const top3 = (await hits.getByTestId('search-hit-title').allTextContents()).slice(0, 3);
	const at = top3.indexOf(GATE_OXIDE);
	expect(at, `top three were ${top3.join(' | ')}`).toBeGreaterThanOrEqual(0);
	// The address follows, so a reload or a shared link shows the same search.
	await expect(page).toHaveURL(/\/o\/fernhollow\/search\?q=reads\+short\+but\+ohmeter\+says\+40$/);

	// ↓ goes into the results, further ↓ (or j) down the list; Enter opens the entry.
	await box.press('ArrowDown');
	for (let k = 0; k < at; k++) await page.keyboard.press(k % 2 ? 'j' : 'ArrowDown');
	const target = hits.nth(at);
	await expect(target).toBeFocused();
	const href = await target.getAttribute('href');
	expect(href).toMatch(/^\/o\/fernhollow\/entries\/[0-9a-f-]{36}$/);
	await page.keyboard.press('Enter');
	await expect(page).toHaveURL(new RegExp(`${href}$`));
});

test('↑ from the first result goes back to the box, and facets narrow with their counts', async ({ page }) => {
	await signIn(page, 'teodor.author@fernhollow.example', { redirectTo: '/o/fernhollow/search' });
	const box = page.getByLabel('What do you see?');
	await box.pressSequentially('leaky capasitor', { delay: 30 });
	await expect(page.getByTestId('search-hit').filter({ hasText: LEAKY_C8 })).toBeVisible();
	await box.press('ArrowDown');
	await expect(page.getByTestId('search-hit').first()).toBeFocused();
	await page.keyboard.press('ArrowUp');
	await expect(box).toBeFocused();

	const facets = page.getByTestId('search-facets');
	await facets.getByRole('checkbox', { name: /Electrolytic capacitor/ }).check();
	await expect(page).toHaveURL(/kind=electrolytic/);
	await expect(page.getByTestId('search-hit').filter({ hasText: LEAKY_C8 })).toBeVisible();
	await expect(page.getByTestId('search-hit').filter({ hasText: 'Bootstrap diode D5 leaky' })).toHaveCount(0);

	await box.fill('quokka marzipan');
	await expect(page.getByTestId('search-no-results')).toContainText('No text match — match the capture instead');
	await expect(page.getByRole('link', { name: 'upload the capture' })).toHaveAttribute('href', '/o/fernhollow/match');
});

test('the top bar box sends the search to the search page', async ({ page }) => {
	await signIn(page, 'pim.contributor@fernhollow.example', { redirectTo: '/o/fernhollow' });
	const top = page.getByRole('search', { name: 'Search entries' });
	await top.getByLabel('Search entries').fill('knee too soft');
	await top.getByLabel('Search entries').press('Enter');
	await expect(page).toHaveURL(/\/o\/fernhollow\/search\?q=knee\+too\+soft/);
	await expect(page.getByTestId('search-hit').first()).toContainText('soft knee');
});

test('the search page works without JavaScript', async ({ page, browser }) => {
	await signIn(page, 'teodor.author@fernhollow.example', { redirectTo: '/o/fernhollow' });
	const context = await browser.newContext({ javaScriptEnabled: false });
	await context.addCookies(await page.context().cookies());
	const plain = await context.newPage();
	await plain.goto('/o/fernhollow/search');
	await plain.getByLabel('What do you see?').fill('leaky capasitor');
	await plain.getByRole('button', { name: 'Search', exact: true }).click();
	await expect(plain).toHaveURL(/q=leaky\+capasitor/);
	const titles = (await plain.getByTestId('search-hit').getByTestId('search-hit-title').allTextContents()).slice(0, 3);
	expect(titles).toContain(LEAKY_C8);

	await plain.getByTestId('search-facets').getByRole('checkbox', { name: /Electrolytic capacitor/ }).check();
	await plain.getByRole('button', { name: 'Apply filters' }).click();
	await expect(plain).toHaveURL(/kind=electrolytic/);
	await expect(plain.getByTestId('search-hit').filter({ hasText: LEAKY_C8 })).toBeVisible();
	await expect(plain.getByTestId('search-hit').filter({ hasText: 'Bootstrap diode D5 leaky' })).toHaveCount(0);
	await context.close();
});

test('the top bar fits a 390 px phone', async ({ page }) => {
	await signIn(page, 'ilse.admin@fernhollow.example', { redirectTo: '/o/fernhollow' });
	await page.setViewportSize({ width: 390, height: 800 });
	for (const path of ['/o/fernhollow', '/o/fernhollow/search?q=leaky']) {
		await page.goto(path);
		const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
		expect(overflow, path).toBe(0);
	}
	// On a phone the top bar's search is a compact link to the search page.
	await page.goto('/o/fernhollow');
	await page.getByTestId('top-search-link').click();
	await expect(page).toHaveURL(/\/o\/fernhollow\/search$/);
	await expect(page.getByLabel('What do you see?')).toBeVisible();
	await page.screenshot({ path: 'test-output/screenshots/search-narrow.png', fullPage: true });
});
