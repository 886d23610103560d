import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, expect, test, type BrowserContext } from '@playwright/test';
import { logRound, plannedSession, signUp, uniqueEmail } from './helpers';

// Offline, proven: on a phone, the run screen opened once is kept by the service worker, and opens
// again with no network at all — a reload, not a page left open — with the groups as it last
// showed them and its reading entry, whose round waits and goes once the network is back. And the
// app passes Chromium's own installability checks.
test.use({ viewport: { width: 390, height: 844 }, serviceWorkers: 'allow' });

/**
 * No network for the page AND its service worker. Playwright's offline mode does not stop a
 * service worker's own fetches; a context route does (Chromium routes them too), so every request
 * fails as with the phone's network gone.
 */
async function cutNetwork(context: BrowserContext) {
	await context.setOffline(true);
	await context.route('**/*', (route) => route.abort('internetdisconnected'));
}

async function restoreNetwork(context: BrowserContext) {
	await context.unrouteAll({ behavior: 'wait' });
	await context.setOffline(false);
}

test('the run screen opens with no network from the kept copy, with its last groups, and its round waits for the network', async ({ page, context }) => {
	test.setTimeout(90_000);
	const slug = await signUp(page, { name: 'Oli Offline', email: uniqueEmail('offline'), workshop: 'Oli Bench' });
	const sessionId = await plannedSession(page, slug);
	const runPath = `/w/${slug}/sessions/${sessionId}`;
	await page.goto(runPath);
	await page.getByRole('button', { name: 'Start session' }).click();
	await page.getByRole('button', { name: 'Start step' }).click();
	await expect(page.getByText('Group 1 on the charger: 4.20\u2009V, 2\u2009A')).toBeVisible();
	const entry = page.getByRole('region', { name: 'Log readings' });
	await expect(entry.getByRole('button', { name: 'Save round' })).toBeEnabled();
	await logRound(page, ['3.7', '3.6', '3.61', '3.598']);
	await expect(entry.getByText('Saved 4 readings')).toBeVisible();

	// The page asks the worker to keep it; opened once more online, the worker controls it and keeps
	// the newest copy and data.
	await page.evaluate(async () => void (await navigator.serviceWorker.ready));
	await page.reload();
	await expect(page.getByRole('listitem', { name: 'Group 1' })).toContainText('3.700\u2009V');
	await expect.poll(() => page.evaluate(() => navigator.serviceWorker.controller !== null)).toBe(true);
	await expect
		.poll(() => page.evaluate(async (path) => (await caches.keys()).length > 0 && (await caches.match(location.origin + path)) !== undefined, runPath))
		.toBe(true);

	await cutNetwork(context);
	await page.reload();
	// The kept copy: the groups as the page last showed them, and it says it is a copy.
	const g1 = page.getByRole('listitem', { name: 'Group 1' });
	await expect(g1).toContainText('3.700\u2009V');
	await expect(g1).toContainText('+73\u2009mV');
	await expect(page.getByText(/No connection\. The groups are as they were/)).toBeVisible();
	// The entry works offline: the round waits on the phone.
	await expect(entry.getByRole('button', { name: 'Save round' })).toBeEnabled();
	await logRound(page, ['3.71', '3.601', '3.612', '3.599']);
	await expect(entry.getByText('4 readings waiting to send — they will go when the connection is back.')).toBeVisible();
	const stored = async () => {
		const answer = await page.request.get(`/api/w/${slug}/sessions/${sessionId}/readings`);
		expect(answer.ok()).toBe(true);
		return ((await answer.json()).readings as unknown[]).length;
	};

	await restoreNetwork(context);
	// The page notices the network by itself (the browser's online event) and sends the round once.
	await expect(entry.getByText('Saved 4 readings')).toBeVisible({ timeout: 20_000 });
	await expect(entry.getByText(/waiting to send/)).toHaveCount(0);
	expect(await stored()).toBe(8);
	await expect(g1).toContainText('3.710\u2009V', { timeout: 15_000 });
});

test('the app passes Chromium’s installability checks', async ({ baseURL }) => {
	// A browser with a profile on disk: Playwright's usual contexts are incognito, which Chromium
	// never offers to install from ("in-incognito"), whatever the app.
	const profile = mkdtempSync(join(tmpdir(), 'cellsitter-install-'));
	const browser = await chromium.launchPersistentContext(profile, {
		executablePath: '/usr/bin/chromium',
		args: ['--disable-gpu', '--no-first-run', '--disable-component-update', '--disable-sync'],
		baseURL
	});
	try {
		const page = browser.pages()[0] ?? (await browser.newPage());
		await page.goto('/login');
		await page.evaluate(async () => void (await navigator.serviceWorker.ready));
		const cdp = await browser.newCDPSession(page);
		// Chromium's own checks of the manifest, icons, start URL, display mode and service worker.
		const errors = async () =>
			((await cdp.send('Page.getInstallabilityErrors')) as { installabilityErrors: { errorId: string }[] }).installabilityErrors.map((e) => e.errorId);
		await expect.poll(errors, { timeout: 15_000 }).toEqual([]);
	} finally {
		await browser.close();
		rmSync(profile, { recursive: true, force: true });
	}
});
