import { expect, test } from '@playwright/test';
import { newNmc21700, signUp, uniqueEmail } from './helpers';

// Invented arrival measurements: eight cells in pairs that sum to 8.00 Ah, one that came in 300 mV
// below the others (suspect, not rejected: it is above NMC's 2.50 V minimum — BU-216), and one
// over-discharged at 2.10 V (rejected).
const csv = [
	'label;volts;resistance_mohm;capacity_ah',
	'K1;3,601;16,1;3,90',
	'K2;3,598;16,4;4,10',
	'K3;3,603;15,9;3,92',
	'K4;3,600;16,0;4,08',
	'K5;3,302;16,2;4,00',
	'K6;3,597;16,3;3,94',
	'K7;3,604;16,6;4,06',
	'K8;3,599;15,8;3,96',
	'K9;3,602;16,5;4,04',
	'K10;2,100;16,0;4,00'
].join('\r\n');

test('a builder records a 4S2P pack, inspects its cells from a CSV and matches them', async ({ page }) => {
	const slug = await signUp(page, { name: 'Bea Builder', email: uniqueEmail('builder'), workshop: 'Bea Bench' });

	await newNmc21700(page, slug, 'Test 21700');

	await page.goto(`/w/${slug}/packs/new`);
	await page.getByLabel('Pack name').fill('Trial trike');
	await page.getByLabel('Groups in series (S)').fill('4');
	await page.getByLabel('Cells per group (P)').fill('2');
	await page.getByLabel('Measured peak current (A)').fill('20');
	// The live preview follows the form: 4 × 3.6 V nominal, 2 × 4 Ah.
	const preview = page.getByRole('region', { name: 'Preview' });
	await expect(preview).toContainText('14.4');
	await expect(preview).toContainText('8.0');
	await page.getByRole('button', { name: 'Create pack' }).click();
	await expect(page.getByRole('heading', { name: 'Trial trike' })).toBeVisible();

	const ratings = page.getByRole('region', { name: 'Pack ratings' });
	await expect(ratings).toContainText('16.8'); // 4 × 4.20 V full
	await expect(ratings).toContainText('Measured peak 20 A');
	await expect(ratings).toContainText('10.00 A per cell');
	await expect(ratings).toContainText('within the continuous rating');

	await page.getByRole('link', { name: /^Cells \(/ }).click();
	await page.getByLabel('CSV file of cell measurements').setInputFiles({
		name: 'arrival.csv',
		mimeType: 'text/csv',
		buffer: Buffer.from(csv, 'utf8')
	});
	await page.getByRole('button', { name: 'Import 10 cells' }).click();
	const inventory = page.getByRole('table', { name: 'Cells of this batch' });
	// One row header per cell; a cell's reasons follow in a row of their own.
	const labels = inventory.getByRole('rowheader');
	await expect(labels).toHaveCount(10);
	// Natural order: K9 before K10.
	await expect(labels.nth(8)).toHaveText('K9');
	await expect(labels.nth(9)).toHaveText('K10');
	const why = (label: string) => inventory.getByRole('cell', { name: new RegExp(`^${label}: `) });
	await expect(inventory.getByRole('row', { name: /^K5\s/ })).toContainText('suspect');
	await expect(why('K5')).toContainText('298 mV below the batch median 3.60 V'); // 3.600 − 3.302
	await expect(inventory.getByRole('row', { name: /^K10\s/ })).toContainText('rejected');
	await expect(why('K10')).toContainText('arrived at 2.10 V, below the 2.50 V minimum: over-discharged — do not charge it');
	await expect(inventory.getByRole('row', { name: /^K1\s/ })).toContainText('ok');

	await page.goto(page.url().replace('/cells', '/matching'));
	await page.getByRole('button', { name: 'Propose a matching' }).click();
	const spares = page.getByRole('heading', { name: /Spares \(1\)/ });
	await expect(spares).toBeVisible();
	await expect(page.getByRole('button', { name: /^K5/ })).toBeVisible();
	await page.getByRole('button', { name: 'Accept this assignment' }).click();
	await expect(page.getByRole('status').filter({ hasText: 'Saved: 8 cells in groups, 1 spare.' })).toBeVisible();

	const spread = page.getByRole('status').filter({ hasText: 'Spread' });
	const before = await spread.textContent();
	const groupRows = page.getByRole('row', { name: /^G\d/ });
	await groupRows.nth(0).getByRole('button').first().click();
	await groupRows.nth(1).getByRole('button').first().click();
	await expect(spread).not.toHaveText(before ?? '');
	await expect(page.getByRole('heading', { name: 'Assignment with your swaps' })).toBeVisible();

	await page.goto(page.url().replace('/matching', ''));
	await expect(page.getByText('8 of 8 cells placed')).toBeVisible();

	// K10's 2.10 V was a typo for 3.61 V: the edit brings it back among the cells not placed.
	await page.getByRole('link', { name: /^Cells \(/ }).click();
	await page.getByRole('button', { name: 'Edit K10' }).click();
	await page.getByLabel('Volts', { exact: true }).fill('3,610');
	await page.getByRole('button', { name: 'Save K10' }).click();
	await expect(page.getByRole('status').filter({ hasText: 'K10 saved. It is no longer rejected' })).toBeVisible();
	await expect(inventory.getByRole('row', { name: /^K10\s/ })).toContainText('not placed');
});
