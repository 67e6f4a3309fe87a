import { expect, test } from '@playwright/test';
import { signIn } from './support/sign-in';

test('the demo organisation shows its latest entries, and authors see how many wait for review', async ({ page }) => {
	await signIn(page, 'teodor.author@fernhollow.example');
	await page.goto('/o/fernhollow');
	const recent = page.getByTestId('recent-entries');
	await expect(recent.getByRole('listitem')).toHaveCount(12);
	await expect(page.getByTestId('in-review')).toContainText('waiting for review');
});

test('a contributor sees published entries and their own drafts, and no review count', async ({ page }) => {
	await signIn(page, 'pim.contributor@fernhollow.example');
	await page.goto('/o/fernhollow');
	await expect(page.getByTestId('recent-entries')).toBeVisible();
	await expect(page.getByTestId('in-review')).toHaveCount(0);
});
