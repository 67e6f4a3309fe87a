import { type BrowserContext, expect, type Page } from '@playwright/test';

/**
 * Signing in for end-to-end tests, the way a person does it: ask for a link on /login, read it in
 * the developer mailbox (the local mail stand-in), open it. Sessions are reused per address within
 * one Playwright worker, so a suite does not spend the per-address and per-client link limits
 * (5 and 20 per 15 minutes) on repeated sign-ins; a reused session is checked before it is trusted.
 */

type Cookies = Awaited<ReturnType<BrowserContext['cookies']>>;
const sessions = new Map<string, Cookies>();

const SESSION_COOKIE = /authjs\.session-token$/;

/** The newest sign-in link the local mailbox holds for `email`. */
export async function latestSignInLink(page: Page, email: string): Promise<string> {
	await page.goto('/dev/mailbox');
	const message = page.getByTestId('mailbox-message').filter({ hasText: email.toLowerCase() }).first();
	await expect(message, `no sign-in mail for ${email} in the developer mailbox`).toBeVisible();
	const href = await message.getByTestId('mailbox-first-link').getAttribute('href');
	if (!href) throw new Error(`The newest mail for ${email} has no link.`);
	return href;
}

/** Asks for a sign-in link for `email` on the sign-in page and waits for the check-your-mail page. */
export async function requestSignInLink(page: Page, email: string, redirectTo?: string): Promise<void> {
	await page.goto(redirectTo ? `/login?redirectTo=${encodeURIComponent(redirectTo)}` : '/login');
	await page.getByLabel('E-mail address').fill(email);
	await page.getByRole('button', { name: 'Send me a sign-in link' }).click();
	await expect(page.getByRole('heading', { name: 'Check your e-mail' })).toBeVisible();
}

async function isSignedInAs(page: Page, email: string): Promise<boolean> {
	await page.goto('/profile');
	return (await page.getByTestId('user-menu').count()) > 0 && (await page.getByText(email.toLowerCase()).count()) > 0;
}

/**
 * Signs `page`'s browser context in as `email` (a demo address or any other: unknown addresses get
 * an account on first sign-in). Ends on `redirectTo` (default: the home page), signed in.
 * Pass `fresh: true` to go through the mail flow even when a session could be reused.
 */
export async function signIn(page: Page, email: string, options: { redirectTo?: string; fresh?: boolean } = {}): Promise<void> {
	const context = page.context();
	const saved = options.fresh ? undefined : sessions.get(email);
	if (saved) {
		await context.clearCookies();
		await context.addCookies(saved);
		if (await isSignedInAs(page, email)) {
			await page.goto(options.redirectTo ?? '/');
			return;
		}
		sessions.delete(email);
	}
	await context.clearCookies();
	await requestSignInLink(page, email, options.redirectTo);
	await page.goto(await latestSignInLink(page, email));
	await expect(page.getByTestId('user-menu')).toBeVisible();
	sessions.set(email, (await context.cookies()).filter((c) => SESSION_COOKIE.test(c.name)));
}

/** Signs out through the user menu, as a person would. */
export async function signOut(page: Page): Promise<void> {
	const menu = page.getByTestId('user-menu');
	await menu.locator('summary').click();
	await menu.getByRole('button', { name: 'Sign out' }).click();
	await expect(page.getByRole('banner').getByRole('link', { name: 'Sign in' })).toBeVisible();
	// The session row is gone now, so no cached copy of it may be reused.
	sessions.clear();
}
