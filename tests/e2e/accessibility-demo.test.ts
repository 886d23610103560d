import { expect, test, type Page } from '@playwright/test';
import { expectAccessible } from './axe';
import { useDemoServer } from './demo-server';
import { signIn } from './helpers';

// Every main page with real content — the demo workshop's packs, sessions (one running, one done
// with its report), alerts, health, labels and audit trail — through axe in both themes, on a
// desktop and on a phone. Pages only a new account shows (empty lists, the forms) are in
// accessibility.test.ts.
const demo = useDemoServer();
const PHONE = { width: 390, height: 844 };
const DESKTOP = { width: 1280, height: 800 };

/** The first link on `path` whose address matches `pattern` (a demo record's page). */
async function firstLink(page: Page, path: string, pattern: RegExp): Promise<string> {
	await page.goto(path);
	const hrefs = await page.getByRole('main').locator('a[href]').evaluateAll((links) => links.map((a) => a.getAttribute('href')!));
	const found = hrefs.find((h) => pattern.test(h));
	expect(found, `a link matching ${pattern} on ${path}`).toBeTruthy();
	return found!;
}

async function ownerPage({ browser }: { browser: import('@playwright/test').Browser }) {
	const page = await (await browser.newContext({ baseURL: demo().baseURL })).newPage();
	await signIn(page, 'owner@larkfield.test', demo().password);
	await expect(page).toHaveURL(/\/w\/larkfield\//, { timeout: 20_000 });
	return page;
}

async function bothSizes(page: Page, paths: string[]) {
	for (const size of [DESKTOP, PHONE]) {
		await page.setViewportSize(size);
		for (const path of paths) await expectAccessible(page, path, `${size.width}×${size.height}`);
	}
}

const W = '/w/larkfield';

test('the packs, their cells, health, labels and self-discharge pages pass axe in both themes, desktop and phone', async ({ browser }) => {
	test.setTimeout(240_000);
	const page = await ownerPage({ browser });
	const pack = await firstLink(page, `${W}/packs`, /\/packs\/[a-z0-9]+$/);
	await bothSizes(page, [
		`${W}/packs`,
		pack,
		`${pack}/cells`,
		`${pack}/matching`,
		`${pack}/edit`,
		`${pack}/history`,
		`${pack}/labels`,
		`${pack}/self-discharge`
	]);
});

test('the sessions, the run screen, a report and the alerts pass axe in both themes, desktop and phone', async ({ browser }) => {
	test.setTimeout(240_000);
	const page = await ownerPage({ browser });
	const sessions = await page
		.goto(`${W}/sessions`)
		.then(() => page.getByRole('main').locator('a[href*="/sessions/"]').evaluateAll((links) => links.map((a) => a.getAttribute('href')!)));
	const session = sessions.find((h) => /\/sessions\/[a-z0-9]+$/.test(h));
	expect(session, 'a session on the sessions page').toBeTruthy();
	const alert = await firstLink(page, `${W}/alerts`, /\/alerts\/[a-z0-9]+$/);
	await bothSizes(page, [
		`${W}/sessions`,
		session!,
		`${session}/report`,
		`${session}/devices`,
		`${session}/upload`,
		`${W}/alerts`,
		alert,
		`${W}/alerts/settings`
	]);
});

test('the workshop, its records and the audit trail pass axe in both themes, desktop and phone', async ({ browser }) => {
	test.setTimeout(240_000);
	const page = await ownerPage({ browser });
	const spec = await firstLink(page, `${W}/cell-specs`, /\/cell-specs\/[a-z0-9]+$/);
	const charger = await firstLink(page, `${W}/chargers`, /\/chargers\/[a-z0-9]+$/);
	await bothSizes(page, [`${W}/cell-specs`, spec, `${W}/chargers`, charger, `${W}/chemistries`, `${W}/workshop`, `${W}/workshop/members`, `${W}/workshop/audit`, '/account']);
});

// Here because this file has the demo running: its camper session's whole-pack reading was taken
// during the bulk charge, hours ago, while the groups were read minutes before the demo loaded.
test('the run screen marks a reading older than the reading interval with its time, not a fresh one', async ({ browser }) => {
	const page = await ownerPage({ browser });
	await page.setViewportSize(PHONE);
	await page.goto(`${W}/sessions`);
	await page.getByRole('main').getByRole('link', { name: 'Bulk charge and cell top-up' }).click();
	// The list's card has the same title: wait for the run screen itself.
	await expect(page).toHaveURL(/\/sessions\/[a-z0-9]+$/);
	await expect(page.getByRole('region', { name: 'Log readings' })).toBeVisible();
	const groups = page.getByRole('region', { name: 'Groups' });
	await expect(groups.locator('p', { hasText: 'Whole pack' })).toContainText(/read at \d\d:\d\d/);
	await expect(groups.getByRole('listitem', { name: 'Group 1' })).toBeVisible();
	await expect(groups.getByRole('listitem', { name: 'Group 1' })).not.toContainText('read at');
});
