import { expect, test } from '@playwright/test';
import pg from 'pg';
import { latestSignInLink, requestSignInLink, signIn, signOut } from './support/sign-in';

// A demo address from src/lib/server/demo/seed.ts (DEMO_USERS), seeded into the e2e database.
const AUTHOR = 'teodor.author@fernhollow.example';

test('signed out, the top bar offers "Sign in" and the profile sends you to the sign-in page', async ({ page }) => {
	await page.goto('/');
	await expect(page.getByTestId('shell-account').getByRole('link', { name: 'Sign in' })).toBeVisible();
	await page.goto('/profile');
	await expect(page).toHaveURL(/\/login\?redirectTo=%2Fprofile$/);
	await expect(page.getByRole('heading', { name: 'Sign in', level: 1 })).toBeVisible();
});

test('signed out, an API route answers 401 with the stable error code instead of a redirect', async ({ request }) => {
	const res = await request.get('/api/v1/me', { maxRedirects: 0 });
	expect(res.status()).toBe(401);
	expect(res.headers()['content-type']).toContain('application/json');
	expect((await res.json()).error).toMatchObject({ code: 'unauthenticated' });
});

test('sign in through the local mailbox, use the user menu, rename yourself and sign out', async ({ page }) => {
	await requestSignInLink(page, AUTHOR, '/profile');
	await expect(page.getByText(AUTHOR)).toBeVisible();

	// The mailbox is clearly the local stand-in and shows the newest message first.
	await page.goto('/dev/mailbox');
	await expect(page.getByText('Local mail stand-in')).toBeVisible();
	const newest = page.getByTestId('mailbox-message').first();
	await expect(newest).toContainText('Sign in to Curvelore');
	await expect(newest).toContainText(AUTHOR);
	await newest.getByRole('link', { name: 'Sign in to Curvelore' }).click();
	await expect(page.getByText('expires in 30 minutes')).toBeVisible();
	const link = await latestSignInLink(page, AUTHOR);
	await page.goto(link);

	// Back where sign-in started, signed in.
	await expect(page).toHaveURL(/\/profile$/);
	await expect(page.getByRole('heading', { name: 'Your profile' })).toBeVisible();
	const menu = page.getByTestId('user-menu');
	await expect(menu.locator('summary')).toContainText('Teodor Quill (demo)');

	// The menu works from the keyboard: Enter opens it, Escape closes it.
	await menu.locator('summary').focus();
	await page.keyboard.press('Enter');
	await expect(menu.getByRole('link', { name: 'Profile' })).toBeVisible();
	await expect(menu).toContainText(AUTHOR);
	await page.keyboard.press('Escape');
	await expect(menu.getByRole('link', { name: 'Profile' })).toBeHidden();

	// An empty or overlong name is refused beside the field; a good one is saved and shown.
	const name = page.getByLabel('Name', { exact: true });
	await name.fill('   ');
	await page.getByRole('button', { name: 'Save name' }).click();
	await expect(page.getByRole('alert')).toHaveText('Enter a display name.');
	await name.fill('x'.repeat(81));
	await page.getByRole('button', { name: 'Save name' }).click();
	await expect(page.getByRole('alert')).toHaveText('Keep the display name to 80 characters or fewer.');
	await name.fill('Teodor Q.');
	await page.getByRole('button', { name: 'Save name' }).click();
	await expect(page.getByRole('status')).toHaveText('Saved.');
	await page.reload();
	await expect(page.getByLabel('Name', { exact: true })).toHaveValue('Teodor Q.');
	await expect(menu.locator('summary')).toContainText('Teodor Q.');
	await page.screenshot({ path: 'test-output/screenshots/profile.png', fullPage: true });

	await signOut(page);
	await page.goto('/profile');
	await expect(page).toHaveURL(/\/login\?redirectTo=/);

	// The same link a second time: used, so a clear page instead of a sign-in.
	await page.goto(link);
	await expect(page).toHaveURL(/\/login\/error\?error=Verification/);
	await expect(page.getByRole('heading', { name: 'This sign-in link no longer works' })).toBeVisible();
});

test('an expired link leads to a clear page, not a sign-in', async ({ page }) => {
	const email = `late.${Date.now()}@lab.example`;
	await requestSignInLink(page, email);
	const link = await latestSignInLink(page, email);
	// Age the token in the database the app uses, as if the 30 minutes had passed.
	const client = new pg.Client({ connectionString: process.env.DATABASE_URL });
	await client.connect();
	try {
		const res = await client.query(`update "VerificationToken" set expires = now() - interval '1 minute' where identifier = $1`, [email]);
		expect(res.rowCount).toBe(1);
	} finally {
		await client.end();
	}
	await page.goto(link);
	await expect(page.getByRole('heading', { name: 'This sign-in link no longer works' })).toBeVisible();
	await expect(page.getByTestId('shell-account').getByRole('link', { name: 'Sign in' })).toBeVisible();
});

test('an invalid address is refused beside the field', async ({ page }) => {
	await page.goto('/login');
	await page.getByLabel('E-mail address').fill('not-an-address');
	await page.getByRole('button', { name: 'Send me a sign-in link' }).click();
	await expect(page.locator('#email-error')).toHaveText('Enter a full e-mail address, like name@example.com.');
	await expect(page.getByLabel('E-mail address')).toHaveAttribute('aria-invalid', 'true');
});

test('the sixth link for one address within 15 minutes is refused with a clear message', async ({ page }) => {
	// A fresh address, so no other test's requests count; the limit is 5 per 15 minutes.
	const email = `flood.${Date.now()}@lab.example`;
	for (let i = 0; i < 5; i++) await requestSignInLink(page, email);
	await page.goto('/login');
	await page.getByLabel('E-mail address').fill(email);
	await page.getByRole('button', { name: 'Send me a sign-in link' }).click();
	// The first request was seconds ago, so its slot frees in 15 minutes (14 if the clock just ticked).
	await expect(page.locator('#email-error')).toHaveText(/^Too many sign-in links requested for this address; try again in 1[45] minutes\.$/);
	await expect(page.getByRole('heading', { name: 'Check your e-mail' })).toHaveCount(0);
});

test('a sign-in target on another site is ignored', async ({ page }) => {
	await signIn(page, 'pim.contributor@fernhollow.example', { redirectTo: 'https://elsewhere.example/steal', fresh: true });
	await expect(page).toHaveURL(/^http:\/\/localhost:\d+\/$/);
});

test.describe('without JavaScript', () => {
	test.use({ javaScriptEnabled: false });

	test('the sign-in form, the invalid-address message and sign-out all work', async ({ page }) => {
		await page.goto('/login');
		await page.getByLabel('E-mail address').fill('still not an address');
		await page.getByRole('button', { name: 'Send me a sign-in link' }).click();
		await expect(page.locator('#email-error')).toBeVisible();
		await signIn(page, 'ilse.admin@fernhollow.example', { fresh: true });
		await expect(page.getByTestId('user-menu')).toBeVisible();
		// <details> opens without script.
		await page.getByTestId('user-menu').locator('summary').click();
		await page.getByRole('button', { name: 'Sign out' }).click();
		await expect(page.getByTestId('shell-account').getByRole('link', { name: 'Sign in' })).toBeVisible();
	});
});
