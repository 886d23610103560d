import { expect, request as playwrightRequest, test, type Page } from '@playwright/test';
import { PASSWORD, linkFromMailbox, logRound, plannedSession, signOut, signUp, uniqueEmail } from './helpers';

// The technician's run screen on a phone: the builder plans and starts the session, a technician
// takes the watch, starts the step, logs a round, loses the connection, logs another round (it
// waits on the phone), comes back and sees it saved exactly once, and stops the session.
test.use({ viewport: { width: 390, height: 844 }, serviceWorkers: 'allow' });

/** The owner invites a technician, who joins through the e-mailed link (left signed in as the technician). */
async function joinTechnician(page: Page, slug: string) {
	const email = uniqueEmail('tech');
	await page.goto(`/w/${slug}/workshop/members`);
	await page.getByLabel('Their e-mail').fill(email);
	await page.getByLabel('Role', { exact: true }).selectOption('technician');
	await page.getByRole('button', { name: 'Send invitation' }).click();
	await expect(page.getByRole('status')).toContainText(`Invitation sent to ${email}`);
	await signOut(page);
	await page.goto(await linkFromMailbox(page, email, '/invite/'));
	await page.getByRole('link', { name: /create my account/ }).click();
	await page.getByLabel('Your name').fill('Tam Technician');
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Join the workshop' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/packs$`));
}

test('a technician runs a session on a phone and logs readings through a dropped connection', async ({ page, baseURL }) => {
	// A long journey: sign-up, cell spec, pack, plan, the run, two rounds, offline and back, the stop.
	test.setTimeout(90_000);
	const slug = await signUp(page, { name: 'Rae Runner', email: uniqueEmail('runner'), workshop: 'Rae Bench' });
	const sessionId = await plannedSession(page, slug);

	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	await expect(page.getByRole('heading', { name: 'First charge' })).toBeVisible();
	await expect(page.getByText('Connect the leads to group 1, set 4.20\u2009V and 2\u2009A')).toBeVisible();
	await page.getByRole('button', { name: 'Start session' }).click();
	await expect(page.getByText('Running', { exact: true })).toBeVisible();

	await joinTechnician(page, slug);
	// A second, separate client counts what the server holds (the page's own offline mode does
	// not stop a service worker's fetches, so the server is the witness).
	const witness = await playwrightRequest.newContext({ baseURL, storageState: await page.context().storageState() });
	const stored = async () => {
		const response = await witness.get(`/api/w/${slug}/sessions/${sessionId}/readings`);
		expect(response.ok()).toBe(true);
		return ((await response.json()).readings as { volts: number | null }[]).map((r) => r.volts).sort();
	};

	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	const watch = page.getByRole('region', { name: 'Watch' });
	await expect(watch).toContainText('On watch: Rae Runner');
	await watch.getByRole('button', { name: 'I’m taking the watch' }).click();
	await expect(watch).toContainText('On watch: you');
	await page.getByRole('button', { name: 'Start step' }).click();
	await expect(page.getByText('Group 1 on the charger: 4.20\u2009V, 2\u2009A')).toBeVisible();

	const entry = page.getByRole('region', { name: 'Log readings' });
	// The save button waits for the page's queue (IndexedDB) — the page is ready.
	await expect(entry.getByRole('button', { name: 'Save round' })).toBeEnabled();
	await logRound(page, ['3.7', '3.6', '3,61', '3.598']);
	await expect(entry.getByText('Saved 4 readings')).toBeVisible();
	expect(await stored()).toEqual([3.598, 3.6, 3.61, 3.7]);
	// The tiles show the round: group 1 at 3.700 V is 73 mV over the mean, (3.7 + 3.6 + 3.61 + 3.598) / 4 = 3.627 V.
	const g1 = page.getByRole('listitem', { name: 'Group 1' });
	await expect(g1).toContainText('3.700\u2009V');
	await expect(g1).toContainText('+73\u2009mV');

	await page.context().setOffline(true);
	await logRound(page, ['3.71', '3.601', '3.612', '3.599']);
	await expect(entry.getByText('4 readings waiting to send — they will go when the connection is back.')).toBeVisible();
	await expect(page.getByText(/No connection\. The groups are as they were/)).toBeVisible();
	// Nothing of the second round reached the server while offline.
	await page.waitForTimeout(1000);
	expect(await stored()).toHaveLength(4);

	await page.context().setOffline(false);
	await expect(entry.getByText('Saved 4 readings')).toBeVisible();
	await expect(entry.getByText(/waiting to send/)).toHaveCount(0);
	expect(await stored()).toEqual([3.598, 3.599, 3.6, 3.601, 3.61, 3.612, 3.7, 3.71]);
	await expect(g1).toContainText('3.710\u2009V');

	// Safety first: a technician may stop at once, with a reason.
	await page.getByRole('button', { name: 'Stop…' }).click();
	await page.getByLabel('Why does the session stop?').fill('Group 1 felt warm');
	await page.getByRole('button', { name: 'Stop the session' }).click();
	await expect(page.getByText('Stopped because: Group 1 felt warm')).toBeVisible();
	await witness.dispose();
});

test('on a phone the floating Log readings button steps aside from the entry form and the Stop button', async ({ page }) => {
	const slug = await signUp(page, { name: 'Fay Thumb', email: uniqueEmail('thumb'), workshop: 'Fay Bench' });
	const sessionId = await plannedSession(page, slug);
	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	await page.getByRole('button', { name: 'Start session' }).click();
	await expect(page.getByText('Running', { exact: true })).toBeVisible();

	const floating = page.getByRole('link', { name: 'Log readings' });
	const entry = page.getByRole('region', { name: 'Log readings' });
	// At the top of the screen the entry form is out of sight: the button is there.
	await page.evaluate(() => window.scrollTo(0, 0));
	await expect(entry).not.toBeInViewport();
	await expect(floating).toBeVisible();
	// A tap on it brings the form up, and the button goes, so it covers neither Save nor Stop.
	await floating.click();
	await expect(entry).toBeInViewport();
	await expect(floating).toBeHidden();
	const stop = page.getByRole('button', { name: 'Stop…' });
	await stop.scrollIntoViewIfNeeded();
	await expect(stop).toBeInViewport();
	await expect(floating).toBeHidden();
	// Scrolled back up, it returns.
	await page.evaluate(() => window.scrollTo(0, 0));
	await expect(floating).toBeVisible();

	// The charts' note reads as a sentence once there is a reading.
	await expect(entry.getByRole('button', { name: 'Save round' })).toBeEnabled();
	await logRound(page, ['3.7', '3.6', '3.61', '3.598']);
	await expect(entry.getByText('Saved 4 readings')).toBeVisible();
	await expect(page.getByText(/^Times in \S+\. The figures below follow every reading/)).toBeVisible();
});
