import { randomUUID } from 'node:crypto';
import { expect, type APIRequestContext, type Page } from '@playwright/test';

/** Each test signs up its own accounts, so the sign-in rate limit never makes a test flaky. */
export function uniqueEmail(label: string): string {
	return `${label}-${randomUUID().slice(0, 8)}@e2e.cellsitter.test`;
}

export const PASSWORD = 'a sturdy bench password';

/** Signs up through the form and lands in the new workshop; returns its slug. */
export async function signUp(page: Page, opts: { name: string; email: string; workshop: string }) {
	await page.goto('/signup');
	await page.getByLabel('Your name').fill(opts.name);
	await page.getByLabel('E-mail').fill(opts.email);
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByLabel('Workshop name').fill(opts.workshop);
	await page.getByRole('button', { name: 'Create account and workshop' }).click();
	await expect(page).toHaveURL(/\/w\/[a-z0-9-]+\/packs$/);
	return new URL(page.url()).pathname.split('/')[2];
}

export async function signOut(page: Page) {
	await page.getByLabel(/Account menu/).click();
	await page.getByRole('button', { name: 'Sign out' }).click();
	await expect(page).toHaveURL(/\/login$/);
}

export async function signIn(page: Page, email: string, password = PASSWORD) {
	await page.goto('/login');
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(password);
	await page.getByRole('button', { name: 'Sign in' }).click();
}

/** The first link to `path` in the newest message the local fake mailbox holds for `to`. */
export async function linkFromMailbox(page: Page, to: string, path: string): Promise<string> {
	await page.goto(`/fakes/mailbox?to=${encodeURIComponent(to)}`);
	const link = page.getByRole('article').first().getByRole('link').filter({ hasText: path });
	await expect(link).toBeVisible();
	return (await link.getAttribute('href'))!;
}

/** A cell spec through its form: an NMC 21700 of 4 Ah, 4 A charge, 15 A continuous, 30 A burst (invented). */
export async function newNmc21700(page: Page, slug: string, name: string) {
	await page.goto(`/w/${slug}/cell-specs/new`);
	await page.getByLabel('Name').fill(name);
	await page.getByLabel('Chemistry').selectOption('builtin:nmc');
	await page.getByLabel('Capacity (Ah)').fill('4');
	await page.getByLabel('Max charge current (A)').fill('4');
	await page.getByLabel('Max continuous discharge (A)').fill('15');
	await page.getByLabel('Max burst discharge (A)').fill('30');
	await page.getByRole('button', { name: 'Save cell spec' }).click();
	await expect(page.getByRole('cell', { name })).toBeVisible();
}

/** A 4S1P NMC pack with its cells placed, a one-channel bench supply and a planned session, over the JSON API. */
export async function plannedSession(page: Page, slug: string): Promise<string> {
	await newNmc21700(page, slug, 'Run 21700');

	await page.goto(`/w/${slug}/packs/new`);
	await page.getByLabel('Pack name').fill('Run trial');
	await page.getByLabel('Groups in series (S)').fill('4');
	await page.getByLabel('Cells per group (P)').fill('1');
	await page.getByRole('button', { name: 'Create pack' }).click();
	await expect(page.getByRole('heading', { name: 'Run trial' })).toBeVisible();
	const packId = new URL(page.url()).pathname.split('/')[4];

	const api = page.request;
	const ok = async <T>(response: Awaited<ReturnType<APIRequestContext['post']>>): Promise<T> => {
		expect(response.ok(), await response.text()).toBe(true);
		return (await response.json()) as T;
	};
	const volts = [3.61, 3.6, 3.62, 3.59];
	await ok(await api.post(`/api/w/${slug}/packs/${packId}/cells`, { data: { cells: volts.map((v, i) => ({ label: `R${i + 1}`, volts: v })) } }));
	const proposal = await ok<{ groups: { cellIds: string[] }[]; version: string }>(await api.post(`/api/w/${slug}/packs/${packId}/matching`, { data: {} }));
	await ok(
		await api.put(`/api/w/${slug}/packs/${packId}/matching`, {
			data: { groups: proposal.groups.map((g) => g.cellIds), version: proposal.version }
		})
	);
	const { charger } = await ok<{ charger: { id: string; channels: { id: string }[] } }>(
		await api.post(`/api/w/${slug}/chargers`, {
			data: { name: 'Bench supply', kind: 'bench-supply', channels: [{ name: 'Output', maxVolts: 30, maxAmps: 5 }] }
		})
	);
	const { session } = await ok<{ session: { id: string } }>(
		await api.post(`/api/w/${slug}/sessions`, {
			data: {
				packId,
				kind: 'one-at-a-time',
				chargerId: charger.id,
				channelIds: [charger.channels[0].id],
				amps: 2,
				plannedStart: new Date().toISOString(),
				name: 'First charge'
			}
		})
	);
	return session.id;
}

export const FAKES_URL = process.env.FAKES_URL ?? 'http://127.0.0.1:9420';

export type FakeSubscription = { endpoint: string; expirationTime: null; keys: { p256dh: string; auth: string } };

/** Replaces PushManager's subscribe/getSubscription in every page of the context with the fake's subscription. */
export async function fakePushManager(page: Page, subscription: FakeSubscription) {
	await page.context().addInitScript((sub: FakeSubscription) => {
		const KEPT = 'e2e-fake-push-key';
		const made = (serverKey: string) => {
			const bytes = Uint8Array.from(atob(serverKey), (c) => c.charCodeAt(0));
			return {
				endpoint: sub.endpoint,
				expirationTime: null,
				options: { userVisibleOnly: true, applicationServerKey: bytes.buffer },
				toJSON: () => ({ endpoint: sub.endpoint, expirationTime: null, keys: sub.keys }),
				unsubscribe: async () => {
					localStorage.removeItem(KEPT);
					return true;
				}
			};
		};
		PushManager.prototype.subscribe = async function (options?: PushSubscriptionOptionsInit) {
			const key = options?.applicationServerKey;
			if (!(key instanceof Uint8Array)) throw new Error('the page must subscribe with the server key as bytes');
			localStorage.setItem(KEPT, btoa(Array.from(key, (b) => String.fromCharCode(b)).join('')));
			return made(localStorage.getItem(KEPT)!) as unknown as PushSubscription;
		};
		PushManager.prototype.getSubscription = async function () {
			const key = localStorage.getItem(KEPT);
			return (key ? made(key) : null) as unknown as PushSubscription | null;
		};
	}, subscription);
}

/**
 * Turns push on for this phone from the account page: notifications granted, and the page's
 * PushManager handing out a subscription the fake push service made for the server's VAPID key.
 */
export async function turnOnPush(page: Page, baseURL: string): Promise<FakeSubscription> {
	await page.context().grantPermissions(['notifications'], { origin: baseURL });
	const { publicKey } = (await (await page.request.get('/api/push-subscriptions/key')).json()) as { publicKey: string };
	const made = await page.request.post(`${FAKES_URL}/push/subscriptions`, { data: { applicationServerKey: publicKey } });
	expect(made.status()).toBe(201);
	const subscription = (await made.json()) as FakeSubscription;
	await fakePushManager(page, subscription);
	await page.goto('/account');
	const card = page.getByRole('region', { name: 'Alerts on this device' });
	await expect(card.getByText('Alerts do not come to this device.')).toBeVisible();
	await card.getByRole('button', { name: 'Send alerts to this phone' }).click();
	await expect(card.getByText('Alerts will come to this device.')).toBeVisible();
	return subscription;
}

/**
 * The page's service worker as DevTools sees it: `push(data)` hands it a push message (as a push
 * service would), `shown(tag)` lists the notifications it shows with that tag.
 */
export async function serviceWorkerPush(page: Page, baseURL: string) {
	const origin = new URL(baseURL).origin;
	const cdp = await page.context().newCDPSession(page);
	const registrationId = new Promise<string>((resolve) => {
		cdp.on('ServiceWorker.workerRegistrationUpdated', ({ registrations }) => {
			const mine = registrations.find((r) => !r.isDeleted && r.scopeURL === `${origin}/`);
			if (mine) resolve(mine.registrationId);
		});
	});
	await cdp.send('ServiceWorker.enable');
	return {
		// Delivered only once the worker is active: a push handed to a worker still installing can be
		// dropped, which a loaded machine showed once as a notification that never came.
		push,
		/**
		 * Pushes `data` and waits for a notification tagged `tag`, pushing again every 5 s up to
		 * `timeoutMs`: DevTools' push delivery can drop a message while Chromium restarts the worker
		 * (seen on a loaded machine), which a real push service would deliver again. The same tag
		 * replaces, so a second delivery shows the same one notification.
		 */
		async pushUntilShown(data: string, tag: string, timeoutMs = 20_000) {
			const deadline = Date.now() + timeoutMs;
			for (;;) {
				await push(data);
				const tryUntil = Math.min(deadline, Date.now() + 5_000);
				while (Date.now() < tryUntil) {
					const list = await shown(tag);
					if (list.length) return list;
					await page.waitForTimeout(250);
				}
				if (Date.now() >= deadline) return shown(tag);
			}
		},
		shown
	};

	async function push(data: string) {
		await page.evaluate(async () => void (await navigator.serviceWorker.ready));
		await cdp.send('ServiceWorker.deliverPushMessage', { origin, registrationId: await registrationId, data });
	}

	function shown(tag: string) {
		return page.evaluate(async (t) => {
			const registration = await navigator.serviceWorker.ready;
			return (await registration.getNotifications({ tag: t })).map((n) => ({
				title: n.title,
				body: n.body,
				data: n.data as { url: string },
				requireInteraction: n.requireInteraction
			}));
		}, tag);
	}
}

/** A round on the run screen: one volts-per-cell value per group (Enter moves on), then "Save round". */
export async function logRound(page: Page, volts: string[]) {
	const entry = page.getByRole('region', { name: 'Log readings' });
	for (const [i, v] of volts.entries()) {
		const field = entry.getByLabel(`G${i + 1} volts per cell`);
		await field.fill(v);
		await field.press('Enter');
	}
	await entry.getByRole('button', { name: 'Save round' }).click();
}
