import { readFileSync } from 'node:fs';
import { expect, test } from '@playwright/test';
import { signIn } from './support/sign-in';

const PNG = readFileSync('tests/fixtures/photos/board-64x48.png');

/** The id of a demo entry, found through the JSON API with the signed-in page's session. */
async function entryId(page: import('@playwright/test').Page, title: string): Promise<string> {
	const res = await page.request.get(`/api/v1/orgs/fernhollow/entries?q=${encodeURIComponent(title)}&limit=5`);
	const body = (await res.json()) as { entries: { id: string; title: string }[] };
	const hit = body.entries.find((e) => e.title === title);
	if (!hit) throw new Error(`demo entry not found: ${title}`);
	return hit.id;
}

test('the uploader pre-checks, uploads with progress, lists and deletes a photo; demo photos are real images', async ({ page }) => {
	await signIn(page, 'teodor.author@fernhollow.example');
	const id = await entryId(page, 'Bootstrap diode D5 leaky');
	await page.goto(`/o/fernhollow/entries/${id}/photos`);
	const uploader = page.getByTestId('photo-uploader');
	const list = uploader.getByRole('list', { name: 'Photos of this entry' });
	// The demo seed drew two pictures for this entry; the browser decodes them.
	await expect(list.getByRole('listitem')).toHaveCount(2);
	const sizes = await list.locator('img').evaluateAll((imgs) =>
		Promise.all((imgs as HTMLImageElement[]).map((img) => img.decode().then(() => `${img.naturalWidth}×${img.naturalHeight}`)))
	);
	expect(sizes.sort()).toEqual(['320×320', '480×320']);

	// A text file named .png is refused in the browser before anything is sent.
	await uploader.getByLabel('Add photos').setInputFiles({ name: 'notes.png', mimeType: 'image/png', buffer: Buffer.from('R27 reads open\n') });
	await expect(uploader.getByRole('alert')).toContainText('This file is not a photo');
	await expect(list.getByRole('listitem')).toHaveCount(2);

	// A PNG named .txt is a photo: it uploads and appears with its real extension.
	await uploader.getByLabel('Add photos').setInputFiles({ name: 'bench shot.txt', mimeType: 'text/plain', buffer: PNG });
	await expect(list.getByRole('listitem')).toHaveCount(3);
	const added = list.getByRole('listitem').filter({ hasText: 'bench shot.png' });
	await expect(added).toContainText('64 × 48 px');
	await expect(added.getByLabel('Markdown to paste into the text')).toHaveValue(/^!\[bench shot\]\(\/api\/v1\/orgs\/fernhollow\/photos\/[0-9a-f-]{36}\)$/);

	page.once('dialog', (d) => void d.accept());
	await added.getByRole('button', { name: 'Delete photo bench shot.png' }).click();
	await expect(list.getByRole('listitem')).toHaveCount(2);
	await page.reload();
	await expect(page.getByTestId('photo-uploader').getByRole('list', { name: 'Photos of this entry' }).getByRole('listitem')).toHaveCount(2);
});

test('export the demo organisation and import it into a new one: twice adds nothing more', async ({ page, browser }) => {
	test.setTimeout(120_000);
	await signIn(page, 'ilse.admin@fernhollow.example');
	await page.goto('/o/fernhollow/transfer');
	const download = page.waitForEvent('download');
	await page.getByRole('link', { name: 'Download export' }).click();
	const file = await (await download).path();
	const bundle = JSON.parse(readFileSync(file, 'utf8')) as { format: string; entries: { photos: unknown[] }[] };
	expect(bundle.format).toBe('curvelore-bundle');
	expect(bundle.entries.filter((e) => e.photos.length > 0)).toHaveLength(5);

	// Someone else's new organisation imports it.
	const context = await browser.newContext();
	const other = await context.newPage();
	await signIn(other, 'transfer.lead@elsewhere.example');
	await other.goto('/orgs/new');
	await other.getByLabel('Name').fill('Transfer bench');
	await other.getByLabel('Address').fill('transfer-bench');
	await other.getByRole('button', { name: 'Create organisation' }).click();
	await other.waitForURL('**/o/transfer-bench');
	await other.goto('/o/transfer-bench/transfer');
	await other.getByLabel('Bundle file').setInputFiles(file);
	await other.getByRole('button', { name: 'Import bundle' }).click();
	const report = other.getByTestId('import-report');
	await expect(report).toContainText(`${bundle.entries.length} entries imported`, { timeout: 60_000 });
	await expect(report).toContainText('0 skipped');

	await other.getByLabel('Bundle file').setInputFiles(file);
	await other.getByRole('button', { name: 'Import bundle' }).click();
	await expect(other.getByTestId('import-report')).toContainText(`0 entries imported, 0 as new drafts beside existing ones, ${bundle.entries.length} skipped`, { timeout: 60_000 });
	await context.close();
});
