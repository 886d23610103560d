import { expect, test, type APIRequestContext, type APIResponse, type Page } from '@playwright/test';
import { PASSWORD, uniqueEmail } from './helpers';

// Two browsers on one running session: a reading posted from the first reaches the second as a
// server-sent event, and the second's chart shows it without a reload.
const phone = { viewport: { width: 390, height: 844 } };
// Forms and sign-ins on a busy machine: room for the slow steps, none for polling to pass.
test.setTimeout(90_000);
const slow = { timeout: 20_000 };

async function ok(response: APIResponse) {
	expect(response.ok(), await response.text()).toBe(true);
	return response.json();
}

/** Posts a page's form the way a browser without script would (no hydration to wait for); the answer's Location. */
async function postForm(api: APIRequestContext, baseURL: string, path: string, form: Record<string, string>) {
	const response = await api.post(path, { form, headers: { origin: baseURL, accept: 'text/html' }, maxRedirects: 0 });
	expect(response.status(), await response.text()).toBe(303);
	return response.headers()['location'];
}

/** A new account and workshop (Berlin time) signed in in this context; returns the workshop's slug. */
async function signUpByForm(api: APIRequestContext, baseURL: string, email: string) {
	const location = await postForm(api, baseURL, '/signup', {
		name: 'Lee Live',
		email,
		password: PASSWORD,
		workshopName: 'Lee Bench',
		timeZone: 'Europe/Berlin',
		invitation: ''
	});
	return location.split('/')[2];
}

/** A 2S1P NMC pack with its cells placed, a bench supply, and a session started with its first step running. */
async function runningSession(api: APIRequestContext, baseURL: string, slug: string): Promise<string> {
	const specLocation = await postForm(api, baseURL, `/w/${slug}/cell-specs/new?next=new-pack`, {
		name: 'Live 18650',
		chemistry: 'builtin:nmc',
		capacityAh: '3',
		maxChargeAmps: '3',
		maxContinuousAmps: '10',
		maxBurstAmps: '20'
	});
	const cellSpecId = new URL(specLocation, baseURL).searchParams.get('spec');
	const base = `/api/w/${slug}`;
	const { pack } = await ok(
		await api.post(`${base}/packs`, {
			data: { name: 'Live trial', cellSpecId, series: 2, parallel: 1, bmsFitted: false, status: 'building' }
		})
	);
	const packId = pack.id as string;
	await ok(await api.post(`${base}/packs/${packId}/cells`, { data: { cells: [3.61, 3.6].map((v, i) => ({ label: `L${i + 1}`, volts: v })) } }));
	const proposal = await ok(await api.post(`${base}/packs/${packId}/matching`, { data: {} }));
	await ok(
		await api.put(`${base}/packs/${packId}/matching`, {
			data: { groups: proposal.groups.map((g: { cellIds: string[] }) => g.cellIds), version: proposal.version }
		})
	);
	const { charger } = await ok(
		await api.post(`${base}/chargers`, { data: { name: 'Bench supply', kind: 'bench-supply', channels: [{ name: 'Output', maxVolts: 30, maxAmps: 5 }] } })
	);
	const { session, steps } = await ok(
		await api.post(`${base}/sessions`, {
			data: {
				packId,
				kind: 'one-at-a-time',
				chargerId: charger.id,
				channelIds: [charger.channels[0].id],
				amps: 1.5,
				plannedStart: new Date().toISOString(),
				name: 'Live trial charge'
			}
		})
	);
	await ok(await api.post(`${base}/sessions/${session.id}/status`, { data: { action: 'start' } }));
	await ok(await api.post(`${base}/sessions/${session.id}/steps/${steps[0].id}`, { data: { action: 'start' } }));
	return session.id as string;
}

test('a second browser receives a new reading as a server-sent event and charts it without reloading', async ({ browser, baseURL }) => {
	const email = uniqueEmail('live');
	const bench = await browser.newContext(phone);
	const page = await bench.newPage();
	const slug = await signUpByForm(page.request, baseURL!, email);
	const sessionId = await runningSession(page.request, baseURL!, slug);
	const readingsUrl = `/api/w/${slug}/sessions/${sessionId}/readings`;
	await ok(await page.request.post(readingsUrl, { data: { readings: [{ clientId: 'first', groupIndex: 1, takenAt: new Date(Date.now() - 60_000).toISOString(), volts: 3.655, tempC: 24 }] } }));

	// The second browser: its own sign-in, the run screen open and connected for live updates.
	const desk = await browser.newContext(phone);
	const watcher = await desk.newPage();
	const pageErrors: string[] = [];
	watcher.on('pageerror', (e) => pageErrors.push(e.message));
	await postForm(watcher.request, baseURL!, '/login', { email, password: PASSWORD, next: '' });
	await watcher.goto(`/w/${slug}/sessions/${sessionId}`);
	const summary = watcher.getByTestId('volts-summary');
	await expect(summary).toContainText('3.655', slow);
	// The indicator turns live only once the page's script has opened the event stream.
	await expect(watcher.getByRole('status').filter({ hasText: 'Live: new readings appear here' })).toBeVisible(slow);
	await watcher.evaluate(() => ((window as unknown as { untouched: boolean }).untouched = true));

	// The event itself: an EventSource in the second browser resolves on the first `reading` event.
	const eventsUrl = `/api/w/${slug}/sessions/${sessionId}/events`;
	const heard = watcher.evaluate(
		(url) =>
			new Promise<{ data: unknown; at: number }>((resolve, reject) => {
				const source = new EventSource(url);
				const w = window as unknown as { streamOpen?: boolean };
				source.onopen = () => (w.streamOpen = true);
				source.addEventListener('reading', (e) => {
					source.close();
					resolve({ data: JSON.parse((e as MessageEvent).data), at: Date.now() });
				});
				setTimeout(() => reject(new Error('no reading event within 15 s')), 15_000);
			}),
		eventsUrl
	);
	await watcher.waitForFunction(() => (window as unknown as { streamOpen?: boolean }).streamOpen === true);

	const before = Date.now();
	await ok(await page.request.post(readingsUrl, { data: { readings: [{ clientId: 'second', groupIndex: 2, takenAt: new Date().toISOString(), volts: 3.912 }] } }));
	const event = await heard;
	expect(event.data).toMatchObject({ sessionId, kind: 'reading', count: 1 });
	expect(event.at).toBeGreaterThanOrEqual(before);

	// The chart's summary follows without a reload: the same window, the new highest group.
	await expect(summary).toContainText('highest G2 3.912');
	await expect(summary).toContainText('lowest G1 3.655');
	expect(await watcher.evaluate(() => (window as unknown as { untouched?: boolean }).untouched)).toBe(true);
	// The drawings load when asked for, and the choice is remembered on this device.
	const chart = watcher.getByRole('img', { name: 'Chart of volts per cell by group over time' });
	await expect(chart).toHaveCount(0);
	await watcher.getByRole('button', { name: 'Draw the charts' }).click();
	await expect(chart).toBeVisible();
	await watcher.reload();
	await expect(chart).toBeVisible(slow);
	await expect(watcher.getByRole('button', { name: 'Hide the drawings' })).toHaveAttribute('aria-pressed', 'true');
	expect(pageErrors).toEqual([]);

	await bench.close();
	await desk.close();
});

test('a reading arriving while the technician leaves the run screen does not keep them there', async ({ browser, baseURL }) => {
	const context = await browser.newContext(phone);
	const page = await context.newPage();
	const slug = await signUpByForm(page.request, baseURL!, uniqueEmail('leave'));
	const sessionId = await runningSession(page.request, baseURL!, slug);
	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	await expect(page.getByRole('status').filter({ hasText: 'Live: new readings appear here' })).toBeVisible(slow);

	// The pack page's data is held back for 1.5 s, so the tap's navigation is still under way when
	// the reading's event reaches the run screen (which reloads its own data 250 ms after an event).
	let held = false;
	await page.route('**/packs/*/__data.json*', async (route) => {
		held = true;
		await new Promise((r) => setTimeout(r, 1_500));
		await route.continue();
	});
	await page.getByRole('link', { name: 'Live trial', exact: true }).click();
	await expect.poll(() => held).toBe(true);
	await ok(
		await page.request.post(`/api/w/${slug}/sessions/${sessionId}/readings`, {
			data: { readings: [{ clientId: 'while-leaving', groupIndex: 1, takenAt: new Date().toISOString(), volts: 3.7 }] }
		})
	);
	await expect(page).toHaveURL(/\/packs\/[^/]+$/, slow);
	await expect(page.getByRole('heading', { name: 'Live trial', level: 1 })).toBeVisible();
	await context.close();
});
