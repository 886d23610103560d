import { readFileSync } from 'node:fs';
import { expect, test } from '@playwright/test';
import { useDemoServer } from './demo-server';
import { signIn } from './helpers';

// The demo workshop's owner on a phone: the audit trail from the workshop page (the technician's
// acknowledgement of the drift alert with its note), a filter by kind, and the whole-workshop zip
// downloaded from the same page; the pack's owner (the demo's viewer) downloads a session's readings.
test.use({ viewport: { width: 390, height: 844 } });

const demo = useDemoServer();

test('the owner reads the audit trail on a phone, filters it and downloads the workshop', async ({ browser }) => {
	const context = await browser.newContext({ baseURL: demo().baseURL, viewport: { width: 390, height: 844 }, acceptDownloads: true });
	const page = await context.newPage();
	await signIn(page, 'owner@larkfield.test', demo().password);
	await expect(page).toHaveURL(/\/w\/larkfield\//, { timeout: 20_000 });
	await page.goto('/w/larkfield/workshop');
	await page.getByRole('link', { name: 'Audit trail' }).click();
	await expect(page.getByRole('heading', { level: 1, name: 'Audit trail' })).toBeVisible();
	const ack = page.getByRole('listitem').filter({ hasText: 'Alert acknowledged' }).first();
	await expect(ack).toContainText('balance lead was loose at the BMS plug');
	// Nothing wider than the phone.
	expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);

	await page.getByLabel('Kind of change').selectOption({ label: 'Alert acknowledged' });
	await page.getByRole('button', { name: 'Show' }).click();
	await expect(page).toHaveURL(/kind=alert\.acknowledge/);
	const titles = await page.getByRole('listitem').getByRole('heading', { level: 2 }).allTextContents();
	expect(titles.length).toBeGreaterThan(0);
	for (const t of titles) expect(t).toMatch(/^Alert acknowledged/);
	await expect(page.getByLabel('Kind of change')).toHaveValue('alert.acknowledge');

	await page.goto('/w/larkfield/workshop');
	const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: /Download all data/ }).click()]);
	expect(download.suggestedFilename()).toMatch(/^cellsitter-larkfield-\d{4}-\d{2}-\d{2}\.zip$/);
	const zip = readFileSync((await download.path())!);
	expect([...zip.subarray(0, 4)]).toEqual([0x50, 0x4b, 0x03, 0x04]);
	// The central directory names every entry in plain bytes.
	for (const name of ['sessions.csv', 'audit.csv', 'alerts.csv', 'cells/', 'readings/']) expect(zip.includes(Buffer.from(name))).toBe(true);
	await context.close();
});

test('the pack’s owner downloads a session’s readings from the session page', async ({ browser }) => {
	const context = await browser.newContext({ baseURL: demo().baseURL, acceptDownloads: true });
	const page = await context.newPage();
	await signIn(page, 'viewer@larkfield.test', demo().password);
	await expect(page).toHaveURL(/\/w\/larkfield\//, { timeout: 20_000 });
	await page.goto('/w/larkfield/sessions');
	await page.getByRole('link', { name: /Charge after a month of riding/ }).first().click();
	const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'Readings (CSV)' }).click()]);
	expect(download.suggestedFilename()).toMatch(/^readings-.+\.csv$/);
	const text = readFileSync((await download.path())!, 'utf8').replace(/^\uFEFF/, '');
	const [header, first] = text.split('\r\n');
	expect(header.startsWith('taken_at,group,volts_V,amps_A,temp_C,ambient_C,note')).toBe(true);
	expect(first).toMatch(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d{3})?[+-]\d{2}:\d{2},/);
	// The viewer may not take the whole workshop.
	const zip = await page.request.get('/w/larkfield/workshop/export.zip');
	expect(zip.status()).toBe(403);
	await context.close();
});
