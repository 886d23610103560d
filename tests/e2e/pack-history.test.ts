import { expect, test } from '@playwright/test';
import { useDemoServer } from './demo-server';
import { signIn } from './helpers';

// The demo's cargo trike, as its owner (the demo's viewer) reads its history on a phone: from the
// pack page to the history, the weakest group named in words with its numbers, another figure
// chosen for the chart and table, and nothing wider than the phone's screen (the table scrolls
// inside its card). The demo runs in a server of its own (tests/e2e/demo-server.ts).
test.use({ viewport: { width: 390, height: 844 } });
const demo = useDemoServer();

test("the pack's owner opens the trike's history and reads which group is the weakest", async ({ browser }) => {
	const page = await (await browser.newContext({ baseURL: demo().baseURL })).newPage();
	await signIn(page, 'viewer@larkfield.test', demo().password);
	await expect(page).toHaveURL(/\/w\/larkfield\//, { timeout: 20_000 });
	await page.goto('/w/larkfield/packs');
	await page.getByRole('link', { name: 'Cargo trike pack' }).first().click();
	await page.getByRole('link', { name: 'Group figures and health over the sessions' }).click();
	await expect(page.getByRole('heading', { level: 1, name: 'History of Cargo trike pack' })).toBeVisible({ timeout: 20_000 });

	await expect(page.getByText(/Group 7 is the weakest: .*rested \d+ mV lower than the mean of the others/)).toBeVisible();
	await expect(page.getByText(/Group 7 is drifting: it ended 40 mV below the others/)).toBeVisible();
	const table = page.getByRole('table', { name: /per group and session/ });
	await expect(table.getByRole('rowheader', { name: /Group 7/ })).toContainText('weakest');
	// Both sessions of the trike are columns, oldest first.
	await expect(table.getByRole('columnheader')).toHaveCount(3);

	await page.getByText('Ah taken', { exact: true }).click();
	await expect(page.getByRole('table', { name: /Ah taken/ })).toBeVisible();
	await expect(table.getByRole('row').nth(1)).toContainText(/\d+\.\d{2}\s?Ah/);
	await expect(page.getByRole('img', { name: /Chart of ah taken per group and session/i })).toBeVisible();

	// Group health: a capacity and a charge resistance per group, and what a fade forecast still needs.
	await expect(page.getByRole('heading', { name: 'Group health' })).toBeVisible();
	const health = page.getByRole('table', { name: /Group health/ });
	await expect(health.getByRole('row', { name: /Group 7/ })).toContainText(/\d+\.\d{2}\s?Ah.*\d+\.\d\s?mΩ/);
	await expect(page.getByText(/^Capacity counted between the rest readings before and after/)).toBeVisible();
	await expect(page.getByText('No fade forecast yet: it needs a capacity counted at three charges or more.')).toBeVisible();

	// Phone first: the page itself never scrolls sideways.
	const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
	expect(overflow).toBeLessThanOrEqual(0);
});
