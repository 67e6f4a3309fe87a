import { expect, type Page, test } from '@playwright/test';
import { signIn } from './support/sign-in';

/**
 * Writing and reviewing an entry in the browser, with script: a contributor writes a new entry
 * whose notes carry script and an image error handler, watches the server's preview, sees
 * autosave store it, and submits it; an author sees the review badge go up, opens the queue and
 * publishes. Every page listens for dialogs (what alert() opens) and console errors, so any
 * script that ran from the entry's text would fail the test.
 */

const CONTRIBUTOR = 'pim.contributor@fernhollow.example';
const AUTHOR = 'teodor.author@fernhollow.example';

function watch(page: Page) {
	const found: string[] = [];
	page.on('dialog', async (dialog) => {
		found.push(`dialog: ${dialog.message()}`);
		await dialog.dismiss();
	});
	page.on('console', (message) => {
		if (message.type() === 'error') found.push(`console: ${message.text()}`);
	});
	page.on('pageerror', (error) => found.push(`page error: ${error.message}`));
	return found;
}

async function badgeCount(page: Page): Promise<number> {
	const badge = page.getByRole('navigation', { name: 'Main' }).getByTestId('nav-badge');
	return (await badge.count()) === 0 ? 0 : Number.parseInt((await badge.innerText()).trim(), 10);
}

test('a contributor writes and submits an entry with hostile text; an author publishes it; nothing runs', async ({ page, browser }) => {
	test.setTimeout(90_000);
	const title = `Hostile notes ${Date.now().toString(36)}`;

	// The author's badge before anything is submitted.
	const authorContext = await browser.newContext();
	const author = await authorContext.newPage();
	const authorProblems = watch(author);
	// The listener catches what an executed alert() and a console error would leave behind.
	await author.goto('/');
	await author.evaluate(() => {
		console.error('probe');
		setTimeout(() => alert('probe'));
	});
	await expect.poll(() => authorProblems.length).toBe(2);
	expect(authorProblems.sort()).toEqual(['console: probe', 'dialog: probe']);
	authorProblems.length = 0;
	await signIn(author, AUTHOR, { redirectTo: '/o/fernhollow' });
	const before = await badgeCount(author);

	const problems = watch(page);
	await signIn(page, CONTRIBUTOR, { redirectTo: '/o/fernhollow' });
	await page.getByRole('link', { name: 'Write an entry' }).click();
	await expect(page.getByRole('heading', { name: 'New entry' })).toBeVisible();

	await page.getByLabel('Title').fill(title);
	await page.getByLabel('Component kind').selectOption('electrolytic');
	await page.getByLabel('Test point').fill('C14 + ↔ C14 −');
	await page.getByLabel('Symptom, in one line').fill('Ripple on the 24 V rail; C14 reads as a *short*');
	await page.getByLabel('Notes').fill('Checked **unpowered**.\n\n<script>alert(1)</script>\n\n<img src=x onerror=alert(2)>\n\n[bad link](javascript:alert(3))');

	// The preview comes from the server: emphasis rendered, the typed HTML shown as text only.
	const preview = page.getByTestId('entry-preview');
	await expect(preview.getByText('<script>alert(1)</script>')).toBeVisible();
	await expect(preview.getByText('<img src=x onerror=alert(2)>')).toBeVisible();
	await expect(preview.locator('strong', { hasText: 'unpowered' })).toBeVisible();
	await expect(preview.locator('em', { hasText: 'short' })).toBeVisible();
	await expect(preview.locator('img, script')).toHaveCount(0);
	await expect(preview.locator('a[href^="javascript"]')).toHaveCount(0);

	// Autosave creates the draft and moves the address to its edit page.
	const status = page.getByTestId('save-status');
	await expect(status).toHaveText(/Saved \d{1,2}:\d{2}/, { timeout: 15_000 });
	await expect(page).toHaveURL(/\/o\/fernhollow\/entries\/[0-9a-f-]{36}\/edit$/);
	const editUrl = page.url();
	// With the draft stored, its curve and photo sections appear.
	await expect(page.getByTestId('traces-section')).toBeVisible();
	await expect(page.getByTestId('photos-section')).toBeVisible();

	// Ctrl+S saves at once.
	await page.getByLabel('Fix').fill('Replace C14 (1000 µF 35 V, 105 °C).');
	await page.keyboard.press('Control+s');
	await expect(status).toHaveAttribute('data-phase', 'saved');
	await expect(status).toHaveText(/Saved \d{1,2}:\d{2}/);

	// Reloading shows what was saved; then submit it.
	await page.reload();
	await expect(page.getByLabel('Fix')).toHaveValue('Replace C14 (1000 µF 35 V, 105 °C).');
	await expect(page.getByLabel('Notes')).toHaveValue(/<script>alert\(1\)<\/script>/);
	await page.getByRole('button', { name: 'Submit for review' }).click();
	await expect(page.getByTestId('submitted-notice')).toContainText('Submitted for review');
	await expect(page.getByTestId('locked-notice')).toContainText('waiting for review');
	expect(page.url()).toContain(`${editUrl}?submitted=`);

	// The author sees one more waiting, opens the queue, publishes.
	await author.goto('/o/fernhollow');
	expect(await badgeCount(author)).toBe(before + 1);
	await author.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: /Review/ }).click();
	await expect(author.getByRole('heading', { name: 'Review', exact: true })).toBeVisible();
	const item = author.getByTestId('review-item').filter({ hasText: title });
	await expect(item).toBeVisible();
	await expect(item).toContainText('C14 reads as a short');
	await item.getByRole('button', { name: `Publish “${title}”` }).click();
	await expect(author.getByTestId('review-notice')).toContainText(`Published “${title}”`);
	await expect(author.getByTestId('review-item').filter({ hasText: title })).toHaveCount(0);
	expect(await badgeCount(author)).toBe(before);

	// The writer's copy is now published and closed to them.
	await page.goto(editUrl);
	await expect(page.getByTestId('locked-notice')).toContainText('published');

	expect(problems).toEqual([]);
	expect(authorProblems).toEqual([]);
	await authorContext.close();
});

test('the editor keeps what was typed when a required field is missing (no script needed)', async ({ browser }) => {
	const context = await browser.newContext({ javaScriptEnabled: false });
	const page = await context.newPage();
	await signIn(page, CONTRIBUTOR, { redirectTo: '/o/fernhollow/entries/new' });
	await page.getByLabel('Symptom, in one line').fill('Relay K2 chatters');
	await page.getByLabel('Notes').fill('Coil measured with the board unpowered.');
	await page.getByRole('button', { name: 'Save draft' }).click();
	await expect(page.locator('#entry-title-error')).toHaveText('Enter a title.');
	await expect(page.locator('#entry-componentKind-error')).toHaveText('Choose the kind of component.');
	await expect(page.getByLabel('Symptom, in one line')).toHaveValue('Relay K2 chatters');
	await expect(page.getByLabel('Notes')).toHaveValue('Coil measured with the board unpowered.');
	await page.getByLabel('Title').fill('Relay K2 coil open-circuit');
	await page.getByLabel('Component kind').selectOption('inductor');
	await page.getByRole('button', { name: 'Save draft' }).click();
	await expect(page).toHaveURL(/\/entries\/[0-9a-f-]{36}\/edit\?saved=1$/);
	await expect(page.getByLabel('Title')).toHaveValue('Relay K2 coil open-circuit');
	await context.close();
});

test('two tabs editing one draft: the later save shows both versions and the writer chooses', async ({ page }) => {
	test.setTimeout(60_000);
	const problems = watch(page);
	await signIn(page, CONTRIBUTOR, { redirectTo: '/o/fernhollow/entries/new' });
	await page.getByLabel('Title').fill(`Two tabs ${Date.now().toString(36)}`);
	await page.getByLabel('Component kind').selectOption('diode');
	await page.getByLabel('Symptom, in one line').fill('No knee on D7 forward');
	await expect(page).toHaveURL(/\/edit$/, { timeout: 15_000 });
	await expect(page.getByTestId('save-status')).toHaveText(/Saved/);

	const other = await page.context().newPage();
	await other.goto(page.url());
	await other.getByLabel('Fix').fill('Fix from the other tab');
	await other.keyboard.press('Control+s');
	await expect(other.getByTestId('save-status')).toHaveText(/Saved/);

	await page.getByLabel('Fix').fill('Fix from this tab');
	await page.keyboard.press('Control+s');
	const conflict = page.getByTestId('conflict');
	await expect(conflict).toBeVisible();
	await expect(page.getByTestId('save-status')).toHaveAttribute('data-phase', 'conflict');
	await expect(conflict.getByTestId('conflict-yours')).toHaveText('Fix from this tab');
	await expect(conflict.getByTestId('conflict-theirs')).toHaveText('Fix from the other tab');

	await conflict.getByRole('button', { name: /Keep mine/ }).click();
	await expect(conflict).toHaveCount(0);
	await expect(page.getByTestId('save-status')).toHaveAttribute('data-phase', 'saved');
	await other.reload();
	await expect(other.getByLabel('Fix')).toHaveValue('Fix from this tab');

	// Now the other tab is behind; it takes the stored version instead of its own.
	await other.getByLabel('Fix').fill('Stale edit');
	await page.getByLabel('Fix').fill('Newest fix');
	await page.keyboard.press('Control+s');
	await expect(page.getByTestId('save-status')).toHaveAttribute('data-phase', 'saved');
	await other.keyboard.press('Control+s');
	await expect(other.getByTestId('conflict')).toBeVisible();
	await other.getByRole('link', { name: /Take theirs/ }).click();
	await expect(other.getByLabel('Fix')).toHaveValue('Newest fix');
	await expect(other.getByTestId('conflict')).toHaveCount(0);
	// The refused save is the browser's only complaint (it logs every 409 response).
	expect(problems.filter((p) => !p.includes('status of 409 (Conflict)'))).toEqual([]);
	await other.close();
});

test('sent back twice: the writer sees the latest comment and both send-backs in the review history', async ({ page, browser }) => {
	test.setTimeout(90_000);
	const title = `Twice returned ${Date.now().toString(36)}`;
	const problems = watch(page);
	await signIn(page, CONTRIBUTOR, { redirectTo: '/o/fernhollow/entries/new' });
	await page.getByLabel('Title').fill(title);
	await page.getByLabel('Component kind').selectOption('zener');
	await page.getByLabel('Symptom, in one line').fill('Second knee at 3 V instead of 5.1 V on D9');
	await expect(page).toHaveURL(/\/edit$/, { timeout: 15_000 });
	await expect(page.getByTestId('save-status')).toHaveText(/Saved/);
	const editUrl = page.url();
	await page.getByRole('button', { name: 'Submit for review' }).click();
	await expect(page.getByTestId('submitted-notice')).toBeVisible();

	const authorContext = await browser.newContext();
	const author = await authorContext.newPage();
	const authorProblems = watch(author);
	await signIn(author, AUTHOR, { redirectTo: '/o/fernhollow/review' });
	const comments = ['Add the known-good curve of a healthy D9.', 'Say which probe was on the anode,\nand the test conditions.'];
	for (const [k, comment] of comments.entries()) {
		if (k > 0) {
			// The writer changes what was asked and submits again from the editor.
			await page.goto(editUrl);
			await expect(page.getByTestId('review-comment')).toContainText(comments[k - 1]);
			await page.getByLabel('Fix').fill(`Fix, take ${k + 1}`);
			await page.getByRole('button', { name: 'Submit for review' }).click();
			await expect(page.getByTestId('submitted-notice')).toBeVisible();
			await author.goto('/o/fernhollow/review');
		}
		const item = author.getByTestId('review-item').filter({ hasText: title });
		await item.getByLabel('What should change before it is published?').fill(comment);
		await item.getByRole('button', { name: `Send “${title}” back with this comment` }).click();
		await expect(author.getByTestId('review-item').filter({ hasText: title })).toHaveCount(0);
	}

	// The editor still leads with the latest comment, and the whole history is one press away.
	await page.goto(editUrl);
	await expect(page.getByTestId('review-comment')).toContainText('Say which probe was on the anode');
	await expect(page.getByTestId('review-comment')).not.toContainText('known-good curve of a healthy D9');
	const expander = page.getByTestId('editor-review-history');
	await expander.getByText('Full review history (4 steps)').click();
	await expect(expander.getByTestId('review-event-comment')).toHaveText(comments);

	// The entry page lists every step, oldest first, each with its person and time.
	await expander.getByRole('link', { name: 'Open it on the entry page' }).click();
	await expect(page).toHaveURL(/\/entries\/[0-9a-f-]{36}#review-history$/);
	const history = page.getByRole('region', { name: 'Review history' });
	const steps = history.getByTestId('review-event');
	await expect(steps).toHaveCount(4);
	await expect(steps.nth(0)).toContainText('Pim');
	await expect(steps.nth(1)).toContainText('sent it back');
	await expect(steps.nth(1)).toContainText('Teodor');
	await expect(steps.nth(3)).toContainText('sent it back');
	await expect(history.getByTestId('review-event-comment')).toHaveText(comments);
	await expect(history.locator('time')).toHaveCount(4);
	await expect(history.locator('time').first()).toHaveAttribute('datetime', /^\d{4}-\d\d-\d\dT/);

	// It fits a phone screen.
	await page.setViewportSize({ width: 390, height: 844 });
	expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
	await history.screenshot({ path: 'test-output/screenshots/review-history-phone.png' });

	expect(problems).toEqual([]);
	expect(authorProblems).toEqual([]);
	await authorContext.close();
});
