import { expect, test } from '@playwright/test';
import { serviceWorkerPush, signUp, turnOnPush, uniqueEmail } from './helpers';

// Push on a phone: the app is installable (manifest and icons), a person turns alerts on for this
// device from the account page and off again, and the service worker shows what a push brings.
// Headless Chromium cannot make a real push subscription (stack.md, item 13): the page's
// PushManager hands out one made by the local fake push service instead, so the server side —
// keys, storage — is real.
test.use({ viewport: { width: 390, height: 844 }, serviceWorkers: 'allow' });

/** A push the service worker handles may wait for the worker to start again: seconds on a busy machine. */
const SHOWN_MS = 20_000;

/** Width and height from a PNG's IHDR chunk (PNG spec, 11.2.2: bytes 16–23, big-endian). */
function pngSize(bytes: Buffer): { width: number; height: number } {
	expect(bytes.subarray(1, 4).toString('latin1')).toBe('PNG');
	return { width: bytes.readUInt32BE(16), height: bytes.readUInt32BE(20) };
}

test('the app links a valid manifest whose icons load at their stated sizes', async ({ page }) => {
	await page.goto('/login');
	const href = await page.locator('link[rel="manifest"]').getAttribute('href');
	expect(href).toBeTruthy();
	const manifestUrl = new URL(href!, page.url());
	const answer = await page.request.get(manifestUrl.href);
	expect(answer.status()).toBe(200);
	const manifest = JSON.parse(await answer.text()) as {
		name: string;
		start_url: string;
		display: string;
		icons: { src: string; sizes: string; type: string; purpose?: string }[];
	};
	expect(manifest).toMatchObject({ name: 'Cellsitter', display: 'standalone' });
	expect(manifest.icons.some((i) => i.sizes === '192x192')).toBe(true);
	expect(manifest.icons.some((i) => i.sizes === '512x512' && i.purpose === 'maskable')).toBe(true);
	for (const icon of manifest.icons) {
		const file = await page.request.get(new URL(icon.src, manifestUrl).href);
		expect(file.status(), icon.src).toBe(200);
		expect(file.headers()['content-type'], icon.src).toContain(icon.type);
		if (icon.type === 'image/png') {
			const { width, height } = pngSize(await file.body());
			expect(`${width}x${height}`, icon.src).toBe(icon.sizes);
		}
	}
	const touch = await page.locator('link[rel="apple-touch-icon"]').getAttribute('href');
	const touchIcon = await page.request.get(new URL(touch!, page.url()).href);
	expect(touchIcon.status()).toBe(200);
	expect(pngSize(await touchIcon.body())).toEqual({ width: 180, height: 180 });
});

test('a person turns push alerts on for this phone and off again; the service worker shows a push', async ({ page, baseURL }) => {
	await signUp(page, { name: 'Pia Push', email: uniqueEmail('push'), workshop: 'Pia Bench' });
	const subscription = await turnOnPush(page, baseURL!);
	const card = page.getByRole('region', { name: 'Alerts on this device' });
	await expect(card.getByText('Alerts come to this device')).toBeVisible();

	const devices = async () =>
		((await (await page.request.get('/api/push-subscriptions')).json()) as { devices: { endpoint: string; label: string }[] }).devices;
	const [device, ...others] = await devices();
	expect(others).toEqual([]);
	expect(device.endpoint).toBe(subscription.endpoint);
	expect(device.label).toMatch(/^Chrome on /);

	// After a reload the page still knows (the browser's subscription and the server's copy agree).
	await page.reload();
	await expect(card.getByRole('button', { name: 'Stop alerts on this phone' })).toBeVisible();

	// The service worker's push handler, through DevTools' own push delivery.
	const { pushUntilShown } = await serviceWorkerPush(page, baseURL!);

	expect(
		await pushUntilShown(
			JSON.stringify({
				title: 'Group 3 is at 4.31 V',
				body: 'Over the 4.25 V limit. Disconnect the charger from group 3.',
				url: '/w/pia-bench/alerts/abc',
				tag: 'alert-e2e-critical',
				severity: 'critical'
			}),
			'alert-e2e-critical',
			SHOWN_MS
		)
	).toEqual([
		{
			title: 'Group 3 is at 4.31 V',
			body: 'Over the 4.25 V limit. Disconnect the charger from group 3.',
			data: { url: `${new URL(baseURL!).origin}/w/pia-bench/alerts/abc` },
			requireInteraction: true
		}
	]);
	// A payload it cannot read still shows a plain notification, and a link to another site is not kept.
	expect((await pushUntilShown('not json', 'cellsitter-alert', SHOWN_MS)).map((n) => n.title)).toEqual(['Cellsitter alert']);
	expect(
		await pushUntilShown(JSON.stringify({ title: 'Elsewhere', body: 'b', url: 'https://example.org/x', tag: 'alert-e2e-away', severity: 'info' }), 'alert-e2e-away', SHOWN_MS)
	).toEqual([{ title: 'Elsewhere', body: 'b', data: { url: `${new URL(baseURL!).origin}/` }, requireInteraction: false }]);

	await card.getByRole('button', { name: 'Stop alerts on this phone' }).click();
	await expect(card.getByText('Alerts no longer come to this device.')).toBeVisible();
	await expect(card.getByRole('button', { name: 'Send alerts to this phone' })).toBeVisible();
	expect(await devices()).toEqual([]);
});
