import { expect, test } from '@playwright/test';
import { latestSignInLink, signIn } from './support/sign-in';

// The demo admin from src/lib/server/demo/seed.ts (DEMO_USERS), seeded into the e2e database.
const ADMIN = 'ilse.admin@fernhollow.example';

test('create an organisation, invite a viewer who accepts and meets the limits, then promote and remove them', async ({ page, browser }) => {
	// Two people and two sign-ins in one story: more steps than the default allowance covers on a busy machine.
	test.setTimeout(120_000);
	const suffix = Date.now().toString(36);
	const name = `Bench Three ${suffix}`;
	const slug = `bench-three-${suffix}`;
	const invitee = `wren.${suffix}@bench-three.example`;

	// The admin creates an organisation from the switcher; the address follows the name.
	await signIn(page, ADMIN);
	const switcher = page.getByTestId('org-switcher');
	await switcher.locator('summary').click();
	await expect(switcher.getByRole('link', { name: 'Fernhollow Drive & Supply Repairs (demo)' })).toBeVisible();
	await switcher.getByRole('link', { name: 'New organisation' }).click();
	await page.getByLabel('Name').fill(name);
	await expect(page.getByLabel('Address')).toHaveValue(slug);
	await page.getByRole('button', { name: 'Create organisation' }).click();
	await expect(page).toHaveURL(new RegExp(`/o/${slug}$`));
	await expect(page.getByRole('heading', { level: 1 })).toHaveText(name);
	await expect(page.getByTestId('org-role')).toContainText('admin');
	await expect(page.getByText('No entries yet.')).toBeVisible();

	// A reserved or taken address is refused beside the field.
	await page.goto('/orgs/new');
	await page.getByLabel('Name').fill('Another');
	await page.getByLabel('Address').fill(slug);
	await page.getByRole('button', { name: 'Create organisation' }).click();
	await expect(page.getByText('That address is taken. Choose another.')).toBeVisible();

	// Invite a viewer; a malformed address is refused first.
	await page.goto(`/o/${slug}`);
	await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Invitations' }).click();
	await page.getByLabel('E-mail address').fill('not-an-address');
	await page.getByRole('button', { name: 'Send invitation' }).click();
	await expect(page.getByText('Enter a valid e-mail address')).toBeVisible();
	await page.getByLabel('E-mail address').fill(invitee);
	await page.getByLabel('Role').selectOption('viewer');
	await page.getByRole('button', { name: 'Send invitation' }).click();
	await expect(page.getByText(`Invitation sent to ${invitee}.`)).toBeVisible();
	const pending = page.getByTestId('pending-invitation').filter({ hasText: invitee });
	await expect(pending).toBeVisible();
	// Resending at once is refused beside that invitation, with the wait (one mail a minute at most).
	await pending.getByRole('button', { name: `Resend to ${invitee}` }).click();
	await expect(pending.getByTestId('resend-refused')).toHaveText(/^You can resend this invitation in \d+ seconds?\.$/);
	const inviteLink = await latestSignInLink(page, invitee);
	expect(inviteLink).toContain('/invite/cli_');

	// The invitee, in a browser of their own, opens the link, signs in with that address and joins.
	const theirs = await browser.newContext();
	const them = await theirs.newPage();
	await them.goto(inviteLink);
	await expect(them.getByRole('heading', { name: `Join ${name}` })).toBeVisible();
	await expect(them.getByText('You are invited as viewer.')).toBeVisible();
	await signIn(them, invitee, { redirectTo: new URL(inviteLink).pathname });
	await them.getByRole('button', { name: `Join ${name}` }).click();
	await expect(them).toHaveURL(new RegExp(`/o/${slug}$`));
	await expect(them.getByTestId('org-role')).toContainText('viewer');

	// A viewer's navigation has no admin sections, and the admin pages refuse them.
	const nav = them.getByRole('navigation', { name: 'Main' });
	await expect(nav.getByRole('link', { name: 'Overview' })).toBeVisible();
	await expect(nav.getByRole('link', { name: 'Members' })).toHaveCount(0);
	await expect(nav.getByRole('link', { name: 'Invitations' })).toHaveCount(0);
	await expect(nav.getByRole('link', { name: 'Settings' })).toHaveCount(0);
	const refused = await them.goto(`/o/${slug}/members`);
	expect(refused?.status()).toBe(403);
	expect((await them.goto(`/o/${slug}/settings`))?.status()).toBe(403);
	// The link works once.
	await them.goto(inviteLink);
	await expect(them.getByRole('heading', { name: 'This invitation has already been used' })).toBeVisible();
	// Their API tokens can be at most viewer there.
	await them.goto('/profile');
	const tokens = them.getByTestId('api-tokens');
	await tokens.getByLabel('Organisation').selectOption({ label: name });
	await expect(tokens.getByLabel('Role').locator('option')).toHaveText(['Viewer']);

	// The admin promotes them to author; the last admin cannot demote themselves.
	await page.goto(`/o/${slug}/members`);
	const row = page.getByTestId('member-row').filter({ hasText: invitee });
	await row.getByRole('combobox').selectOption('author');
	await row.getByRole('button', { name: 'Change role' }).click();
	await expect(row.getByText('Role changed to author.')).toBeVisible();
	await page.screenshot({ path: 'test-output/screenshots/org-members.png', fullPage: true });
	const mine = page.getByTestId('member-row').filter({ hasText: ADMIN });
	await mine.getByRole('combobox').selectOption('viewer');
	await mine.getByRole('button', { name: 'Change role' }).click();
	await expect(mine.getByText('An organisation needs at least one admin.')).toBeVisible();

	await them.goto(`/o/${slug}`);
	await expect(them.getByTestId('org-role')).toContainText('author');

	// Removal takes effect on their very next request: the organisation is then a plain 404 to them.
	page.once('dialog', (dialog) => void dialog.accept());
	await row.getByRole('button', { name: /^Remove / }).click();
	await expect(page.getByTestId('member-row').filter({ hasText: invitee })).toHaveCount(0);
	const gone = await them.goto(`/o/${slug}`);
	expect(gone?.status()).toBe(404);

	// The admin renames the organisation under Settings; a blank name is refused beside the field,
	// and the address stays the same.
	await page.goto(`/o/${slug}`);
	await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Settings' }).click();
	await expect(page).toHaveURL(new RegExp(`/o/${slug}/settings$`));
	await expect(page.getByTestId('org-address')).toHaveText(new RegExp(`/o/${slug}$`));
	const nameField = page.getByLabel('Name', { exact: true });
	await expect(nameField).toHaveValue(name);
	await nameField.fill('   ');
	await page.getByRole('button', { name: 'Save name' }).click();
	await expect(page.getByText('Enter a name.')).toBeVisible();
	await expect(nameField).toHaveAttribute('aria-invalid', 'true');
	const renamed = `${name} east bench`;
	await nameField.fill(renamed);
	await page.getByRole('button', { name: 'Save name' }).click();
	await expect(page.getByTestId('settings-notice')).toHaveText(`The organisation is now called ${renamed}.`);
	await expect(nameField).toHaveValue(renamed);
	await expect(page).toHaveTitle(`Settings — ${renamed} — Curvelore`);
	await page.setViewportSize({ width: 390, height: 800 });
	await page.screenshot({ path: 'test-output/screenshots/org-settings-narrow.png', fullPage: true });
	await page.setViewportSize({ width: 1280, height: 720 });
	await page.goto(`/o/${slug}`);
	await expect(page.getByRole('heading', { level: 1 })).toHaveText(renamed);
	await page.getByTestId('org-switcher').locator('summary').click();
	await expect(page.getByTestId('org-switcher').getByRole('link', { name: renamed })).toBeVisible();

	// Everything above is in the audit log.
	await page.goto(`/o/${slug}/audit`);
	for (const action of ['org.created', 'invitation.created', 'member.joined', 'member.role_changed', 'member.removed', 'org.renamed']) {
		await expect(page.locator(`[data-action="${action}"]`).first()).toBeVisible();
	}
	await page.screenshot({ path: 'test-output/screenshots/org-audit.png', fullPage: true });
	await theirs.close();
});

test('an admin renames an organisation without JavaScript, a blank name refused beside the field', async ({ browser }) => {
	const context = await browser.newContext({ javaScriptEnabled: false });
	const page = await context.newPage();
	const suffix = Date.now().toString(36);
	const slug = `plain-form-${suffix}`;
	await signIn(page, ADMIN);
	await page.goto('/orgs/new');
	await page.getByLabel('Name').fill(`Plain Form ${suffix}`);
	await page.getByLabel('Address').fill(slug);
	await page.getByRole('button', { name: 'Create organisation' }).click();
	await expect(page).toHaveURL(new RegExp(`/o/${slug}$`));

	await page.getByRole('link', { name: 'Organisation settings' }).click();
	const nameField = page.getByLabel('Name', { exact: true });
	await nameField.fill('');
	await page.getByRole('button', { name: 'Save name' }).click();
	await expect(page.getByText('Enter a name.')).toBeVisible();
	await expect(nameField).toHaveAttribute('aria-invalid', 'true');
	await nameField.fill(`Plain Form ${suffix} renamed`);
	await page.getByRole('button', { name: 'Save name' }).click();
	await expect(page.getByTestId('settings-notice')).toHaveText(`The organisation is now called Plain Form ${suffix} renamed.`);
	await expect(page).toHaveTitle(`Settings — Plain Form ${suffix} renamed — Curvelore`);
	await expect(page.getByTestId('org-address')).toHaveText(new RegExp(`/o/${slug}$`));
	await context.close();
});

test('someone else’s organisation is a plain 404, like one that does not exist', async ({ page }) => {
	// The author demo user belongs only to the demo organisation.
	await signIn(page, 'teodor.author@fernhollow.example');
	const missing = await page.goto('/o/no-such-bench-anywhere');
	expect(missing?.status()).toBe(404);
	await expect(page.getByRole('heading', { level: 1 })).toHaveText('There is nothing at this address');
	const demo = await page.goto('/o/fernhollow/members');
	expect(demo?.status()).toBe(403);
	// On a phone-sized screen the top bar still holds the switcher and the user menu.
	await page.setViewportSize({ width: 390, height: 800 });
	await page.goto('/o/fernhollow');
	await expect(page.getByTestId('org-switcher')).toBeVisible();
	await expect(page.getByTestId('user-menu')).toBeVisible();
	await page.screenshot({ path: 'test-output/screenshots/org-home-narrow.png', fullPage: true });
});

test('an API token is shown once, works for its organisation, and stops at revocation', async ({ page, playwright, baseURL }) => {
	await signIn(page, 'pim.contributor@fernhollow.example', { redirectTo: '/profile' });
	const section = page.getByTestId('api-tokens');
	await section.getByLabel('Token name').fill('Bench PC 2');
	// A contributor may hand a token their own role or below, never more.
	await expect(section.getByLabel('Role').locator('option')).toHaveText(['Viewer', 'Contributor']);
	await section.getByLabel('Role').selectOption('viewer');
	await section.getByRole('button', { name: 'Create token' }).click();
	const shown = section.getByTestId('new-token');
	await expect(shown).toHaveValue(/^clt_/);
	const token = await shown.inputValue();

	const api = await playwright.request.newContext({ baseURL, extraHTTPHeaders: { authorization: `Bearer ${token}` } });
	const me = await api.get('/api/v1/me');
	expect(me.status()).toBe(200);
	expect(await me.json()).toMatchObject({ authenticatedBy: 'token', organisations: [{ slug: 'fernhollow', role: 'viewer' }] });

	// After a reload the secret is gone for good; the row shows its last use.
	await page.reload();
	await expect(section.getByTestId('new-token')).toHaveCount(0);
	const row = section.getByTestId('token-row').filter({ hasText: 'Bench PC 2' });
	await expect(row).toContainText('last used');
	await row.getByRole('button', { name: 'Revoke token Bench PC 2' }).click();
	await expect(row).toContainText('revoked');
	const after = await api.get('/api/v1/me');
	expect(after.status()).toBe(401);
	expect(await after.json()).toMatchObject({ error: { code: 'invalid_token' } });
	await api.dispose();
});
