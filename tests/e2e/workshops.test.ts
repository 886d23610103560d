import { expect, test } from '@playwright/test';
import { signUp, uniqueEmail } from './helpers';

test('a member of two workshops switches between them', async ({ page }) => {
	const first = await signUp(page, { name: 'Sol Two', email: uniqueEmail('two'), workshop: 'Sol Garage' });
	await page.goto('/account');
	await page.getByLabel('Workshop name').fill('Sol Makerspace');
	await page.getByRole('button', { name: 'Create workshop' }).click();
	await expect(page).toHaveURL(/\/w\/sol-makerspace(-\d+)?\/packs$/);
	await expect(page.getByLabel(/Workshop: Sol Makerspace/)).toBeVisible();

	await page.getByLabel(/Switch workshop/).click();
	await page.getByRole('list', { name: 'Your workshops' }).getByRole('link', { name: /Sol Garage/ }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${first}/packs$`));
	await expect(page.getByLabel(/Workshop: Sol Garage/)).toBeVisible();
});

test("another workshop's URL gives 404", async ({ browser }) => {
	const a = await browser.newPage();
	const slugA = await signUp(a, { name: 'Ash A', email: uniqueEmail('a'), workshop: 'Ash Secret Bench' });
	const b = await browser.newPage();
	await signUp(b, { name: 'Birch B', email: uniqueEmail('b'), workshop: 'Birch Bench' });

	for (const path of ['packs', 'workshop', 'workshop/members', 'chargers']) {
		const response = await b.goto(`/w/${slugA}/${path}`);
		expect(response?.status(), path).toBe(404);
	}
	await expect(b.getByRole('heading', { name: 'Nothing here' })).toBeVisible();
	await expect(b.getByText('Ash Secret Bench')).toHaveCount(0);
	// A malformed workshop in the URL never reaches any code.
	expect((await b.goto('/w/NOT_A_SLUG/packs'))?.status()).toBe(404);
	await a.close();
	await b.close();
});
