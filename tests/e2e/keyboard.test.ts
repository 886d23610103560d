import { expect, test, type Locator, type Page } from '@playwright/test';
import { PASSWORD, plannedSession, signOut, signUp, uniqueEmail } from './helpers';

// The bench's main flow by keyboard alone: sign in, start the session and its step, log a round,
// and stop the session with a reason — every control reached with Tab and worked with Enter or
// Space, never clicked. (The plan and pack are made beforehand by the usual helpers.)

/** Presses Tab until `target` has the focus; fails when it is not reached in `max` presses. */
async function tabTo(page: Page, target: Locator, max = 80) {
	await expect(target).toBeVisible();
	for (let i = 0; i < max; i++) {
		if (await target.evaluate((el) => el === document.activeElement)) return;
		await page.keyboard.press('Tab');
	}
	throw new Error(`not reached with Tab in ${max} presses: ${target}`);
}

test('a technician signs in, starts, logs a round and stops a session with the keyboard alone', async ({ page }) => {
	test.setTimeout(90_000);
	const email = uniqueEmail('keys');
	const slug = await signUp(page, { name: 'Kit Keys', email, workshop: 'Kit Bench' });
	const sessionId = await plannedSession(page, slug);
	await signOut(page);

	await page.goto(`/login?next=${encodeURIComponent(`/w/${slug}/sessions/${sessionId}`)}`);
	await tabTo(page, page.getByLabel('E-mail'));
	await page.keyboard.type(email);
	await tabTo(page, page.getByLabel('Password'));
	await page.keyboard.type(PASSWORD);
	await page.keyboard.press('Enter');
	await expect(page.getByRole('heading', { name: 'First charge' })).toBeVisible({ timeout: 20_000 });

	await tabTo(page, page.getByRole('button', { name: 'Start session' }));
	await page.keyboard.press('Enter');
	await expect(page.getByText('Running', { exact: true })).toBeVisible();
	await tabTo(page, page.getByRole('button', { name: 'Start step' }));
	await page.keyboard.press('Enter');
	await expect(page.getByText('Group 1 on the charger: 4.20\u2009V, 2\u2009A')).toBeVisible();

	// A round: Enter moves from one group's field to the next; the save button is reached with Tab.
	const entry = page.getByRole('region', { name: 'Log readings' });
	await expect(entry.getByRole('button', { name: 'Save round' })).toBeEnabled();
	await tabTo(page, entry.getByLabel('G1 volts per cell'));
	for (const volts of ['3.70', '3.60', '3.61', '3.598']) {
		await page.keyboard.type(volts);
		await page.keyboard.press('Enter');
	}
	await tabTo(page, entry.getByRole('button', { name: 'Save round' }));
	await page.keyboard.press('Enter');
	await expect(entry.getByText('Saved 4 readings')).toBeVisible();
	await expect(page.getByRole('listitem', { name: 'Group 1' })).toContainText('3.700\u2009V');

	await tabTo(page, page.getByRole('button', { name: 'Stop…' }));
	await page.keyboard.press('Enter');
	await tabTo(page, page.getByLabel('Why does the session stop?'));
	await page.keyboard.type('Group 2 leads loose');
	await tabTo(page, page.getByRole('button', { name: 'Stop the session' }));
	await page.keyboard.press(' ');
	await expect(page.getByText('Stopped because: Group 2 leads loose')).toBeVisible();
});
