import { expect, test } from '@playwright/test';
import { useDemoServer } from './demo-server';
import { signIn } from './helpers';

// The demo's self-discharge check of the cargo trike on a phone: its owner (the demo's viewer)
// reads which group loses charge faster, with the numbers, and has no entry form; the technician
// enters a round of group volts with the keypad's Enter moving down the list, and a bad value
// saves nothing.
test.use({ viewport: { width: 390, height: 844 } });

const demo = useDemoServer();

async function openCheck(page: import('@playwright/test').Page, email: string) {
	await signIn(page, email, demo().password);
	await expect(page).toHaveURL(/\/w\/larkfield\//, { timeout: 20_000 });
	await page.goto('/w/larkfield/packs');
	await page.getByRole('link', { name: 'Cargo trike pack' }).first().click();
	await page.getByRole('link', { name: 'Self-discharge check' }).click();
	await expect(page.getByRole('heading', { level: 1, name: 'Self-discharge check' })).toBeVisible({ timeout: 20_000 });
}

test("the pack's owner reads that group 7 loses charge faster, with the numbers", async ({ browser }) => {
	const page = await (await browser.newContext({ baseURL: demo().baseURL })).newPage();
	await openCheck(page, 'viewer@larkfield.test');
	const caution = page.getByRole('note', { name: 'Loses charge faster' });
	await expect(caution).toContainText(/G7 lost \d+(\.\d)? mV\/day \(\d+ mV in 3\.5 days\); the batch's median is \d(\.\d)? mV\/day\./);
	await expect(caution).toContainText('Keep the pack out of service');
	await expect(page.getByText(/common practice, not a published test/)).toBeVisible();
	await expect(page.getByRole('heading', { name: 'Enter re-measured volts' })).toHaveCount(0);
});

test('the technician enters a round of group volts; one bad value saves nothing', async ({ browser }) => {
	const page = await (await browser.newContext({ baseURL: demo().baseURL })).newPage();
	await openCheck(page, 'technician@larkfield.test');
	const g1 = page.getByRole('textbox', { name: 'G1 volts' });
	await g1.fill('4,141');
	await g1.press('Enter');
	await expect(page.getByRole('textbox', { name: 'G2 volts' })).toBeFocused();
	await page.getByRole('textbox', { name: 'G2 volts' }).fill('4.1.4');
	await page.getByRole('button', { name: 'Save the volts' }).click();
	await expect(page.getByRole('alert')).toContainText('Nothing was saved: G2: volts must be a number.');

	await page.getByRole('textbox', { name: 'G1 volts' }).fill('4.141');
	await page.getByRole('textbox', { name: 'G2 volts' }).fill('4.142');
	await page.getByRole('button', { name: 'Save the volts' }).click();
	await expect(page.getByText('Saved 2 voltages.')).toBeVisible();
	// Compared with the round 3.5 days before (not the one 2 hours ago, too soon); G7 still stands out.
	await expect(page.getByText(/last 4\.141 V/)).toBeVisible();
	await expect(page.getByRole('row', { name: /^G1 3\.6 / })).toBeVisible();
	await expect(page.getByRole('note', { name: 'Loses charge faster' })).toContainText('G7 lost');
});
