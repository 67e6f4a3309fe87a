import { expect, test } from '@playwright/test';
import { signIn } from './support/sign-in';

test('without JavaScript an author attaches a simulated reference and sees it on the entry page', async ({ browser }) => {
	test.setTimeout(60_000);
	const context = await browser.newContext({ javaScriptEnabled: false });
	const page = await context.newPage();
	await signIn(page, 'teodor.author@fernhollow.example');
	const list = await page.request.get('/api/v1/orgs/fernhollow/entries?status=published&limit=1');
	expect(list.ok()).toBe(true);
	const entry = ((await list.json()) as { entries: { id: string }[] }).entries[0];

	// The entry page links to the trace page with a plain link.
	await page.goto(`/o/fernhollow/entries/${entry.id}`);
	await page.getByRole('link', { name: 'Add traces' }).click();
	await expect(page).toHaveURL(new RegExp(`/entries/${entry.id}/traces/new$`));

	const picker = page.getByTestId('simulation-picker');
	await expect(picker.getByTestId('safety-caution')).toBeVisible();
	// Choosing another part reloads the page with that part's fields (no script to swap them).
	await picker.getByLabel('Source resistance (Ω)').fill('4k7');
	await picker.getByLabel('Component').selectOption('leaky-capacitor');
	await picker.getByRole('button', { name: "Show this part's values" }).click();
	await expect(picker.getByLabel('Leakage resistance (Ω)')).toBeVisible();
	await expect(picker.getByLabel('Source resistance (Ω)')).toHaveValue('4k7');

	// A mistyped value comes back with its sentence beside it and everything typed kept.
	const label = `C7 simulated, no script ${Date.now().toString(36)}`;
	await picker.getByLabel('Capacitance (F)').fill('2.2u');
	await picker.getByLabel('Leakage resistance (Ω)').fill('47x');
	await picker.getByLabel('Label (optional)').fill(label);
	await picker.getByRole('button', { name: 'Attach as known-good (simulated)' }).click();
	await expect(picker.getByTestId('simulation-refused')).toContainText('Nothing was attached');
	await expect(picker.getByLabel('Leakage resistance (Ω)')).toHaveAccessibleDescription('“47x” is not a value. Write it like 4k7, 2.2u, 100n or 0.001 (Ω).');
	await expect(picker.getByLabel('Capacitance (F)')).toHaveValue('2.2u');
	await expect(picker.getByLabel('Label (optional)')).toHaveValue(label);
	await expect(picker.getByLabel('Source resistance (Ω)')).toHaveValue('4k7');

	// Corrected, Enter in the field attaches it (the form's default button is "attach").
	await picker.getByLabel('Leakage resistance (Ω)').fill('47k');
	await picker.getByLabel('Leakage resistance (Ω)').press('Enter');
	await expect(page.getByTestId('simulation-attached')).toContainText(`Attached “${label}” as a simulated known-good reference.`);
	await page.setViewportSize({ width: 390, height: 900 });
	await page.screenshot({ path: 'test-output/trace-simulate-nojs.png', fullPage: true });

	await page.getByRole('link', { name: 'see it on the entry page' }).click();
	await expect(page).toHaveURL(new RegExp(`/entries/${entry.id}$`));
	const card = page.getByTestId('trace-list').getByRole('listitem').filter({ hasText: label });
	await expect(card).toContainText('simulated');
	await expect(card).toContainText('10 V · 4.7 kΩ · 60 Hz');
	// 2.2 µF ∥ 47 kΩ: Xc = 1/(2πfC) ≈ 1.21 kΩ at 60 Hz, well below the 47 kΩ leakage, so the
	// part reads as a capacitor (an ellipse, a fact of the trade) with its leakage measured.
	await expect(card.getByTestId('trace-class')).toHaveText('capacitive');
	await expect(card).toContainText(/Capacitance\s*2\.2 µF/);
	await expect(card).toContainText(/Parallel leakage\s*47 kΩ/);
	await context.close();
});

test('with JavaScript the same picker predicts the curve as values are typed and attaches it through the API', async ({ page }) => {
	await signIn(page, 'teodor.author@fernhollow.example');
	const list = await page.request.get('/api/v1/orgs/fernhollow/entries?status=published&limit=1');
	const entry = ((await list.json()) as { entries: { id: string }[] }).entries[0];
	await page.goto(`/o/fernhollow/entries/${entry.id}/traces/new`);
	const picker = page.getByTestId('simulation-picker');
	await picker.getByLabel('Component').selectOption('winding');
	// The fields follow the choice at once; the no-script button is not there.
	await expect(picker.getByRole('button', { name: "Show this part's values" })).toHaveCount(0);
	await picker.getByLabel('Winding resistance (Ω)').fill('x');
	await expect(picker.getByLabel('Winding resistance (Ω)')).toHaveAccessibleDescription('“x” is not a value. Write it like 4k7, 2.2u, 100n or 0.001 (Ω).');
	await picker.getByLabel('Winding resistance (Ω)').fill('100');
	// 1 H with 100 Ω in series at 60 Hz: XL = 2πfL ≈ 377 Ω, so it reads as an inductor (an ellipse).
	const preview = picker.getByTestId('simulation-preview');
	await expect(preview.getByTestId('analysis-class')).toHaveText('Inductive');
	await expect(preview).toContainText(/Inductance\s*1 H/);
	const label = `L2 winding, script ${Date.now().toString(36)}`;
	await picker.getByLabel('Label (optional)').fill(label);
	await picker.getByRole('button', { name: 'Attach as known-good (simulated)' }).click();
	await expect(picker.getByRole('status')).toHaveText('Attached the simulated known-good reference.');
	await expect(page.getByTestId('trace-list').getByTestId('trace-row').filter({ hasText: label })).toContainText('Inductive');
});
