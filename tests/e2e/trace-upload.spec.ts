import { expect, test } from '@playwright/test';
import { simulate } from '../../src/lib/signature/simulate';
import { seededRandom, synthesiseSamples, writeCapture } from '../support/captures';
import { signIn } from './support/sign-in';

const conditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

/** A bench-like V-I CSV of a 4.7 kΩ resistor, made with the engine's simulator plus noise. */
function resistorCapture(): Buffer {
	const rng = seededRandom(47);
	const curve = simulate({ kind: 'resistor', ohms: 4700 }, conditions, { points: 2048 });
	const written = writeCapture(synthesiseSamples(curve, { rng, noise: 0.01 }), {
		format: 'vi-csv',
		delimiter: ',',
		header: 'parens',
		voltageUnit: 'V',
		currentUnit: 'mA',
		withTime: true,
		currentFirst: false,
		crlf: false,
		bom: false,
		comments: false,
		decimalComma: false
	});
	return Buffer.from(written.text);
}

test('an author previews a capture on /traces/new, sees its curve and class, and saves it', async ({ page }) => {
	await signIn(page, 'teodor.author@fernhollow.example');
	const list = await page.request.get('/api/v1/orgs/fernhollow/entries?status=published&limit=1');
	expect(list.ok()).toBe(true);
	const entry = ((await list.json()) as { entries: { id: string }[] }).entries[0];
	await page.goto(`/o/fernhollow/entries/${entry.id}/traces/new`);

	const uploader = page.getByTestId('trace-uploader');
	await expect(uploader.getByTestId('safety-caution')).toBeVisible();
	await uploader.getByLabel('Source peak voltage (V)').fill('10');
	await uploader.getByLabel('Source resistance (Ω)').fill('1000');
	await uploader.getByLabel('Frequency (Hz)').fill('60');
	await uploader.getByLabel('Label (optional), e.g. the test point').fill('R9 ↔ GND, e2e');
	await uploader.locator('input[type=file]').setInputFiles({ name: 'r9.csv', mimeType: 'text/csv', buffer: resistorCapture() });

	// The browser's engine previews before anything is sent: a plot and the class.
	const preview = uploader.getByTestId('trace-preview');
	await expect(preview.getByTestId('signature-plot').locator('canvas').first()).toBeVisible();
	await expect(preview.getByTestId('analysis-class')).toHaveText('Resistive');
	// A 4.7 kΩ part (Ohm's law: the slope of a resistor's line is its resistance).
	await expect(preview).toContainText(/Resistance\s*4\.\d+ kΩ/);

	await page.setViewportSize({ width: 390, height: 900 });
	await page.screenshot({ path: 'test-output/trace-upload-preview.png', fullPage: true });

	await uploader.getByRole('button', { name: 'Save trace' }).click();
	await expect(uploader.getByTestId('trace-saved')).toContainText('Saved the fault trace');
	const row = page.getByTestId('trace-list').getByTestId('trace-row').filter({ hasText: 'R9 ↔ GND, e2e' });
	await expect(row).toContainText('Resistive');
	await expect(row).toContainText('10 V · 1 kΩ · 60 Hz');
});
