import { randomUUID } from 'node:crypto';
import { expect, test } from '@playwright/test';
import postgres from 'postgres';
import { appServerUnavailable, scratchDatabase, signUpWithRunningSession, startAppServer, type AppServer, type ScratchDatabase } from './app-server';
import { PASSWORD } from './helpers';

// The database goes away during a running session and comes back: the app serves again without a
// restart, and a round logged on the run screen meanwhile waits on the phone and is stored once.
// The test's PostgreSQL is shared by the whole run, so the outage is made on this test's own
// database only: every connection to it is ended and new ones are refused (ALLOW_CONNECTIONS
// false) for a while — what the app meets when its database restarts — then allowed again.
const OUTAGE_MS = 6_000;
const phone = { viewport: { width: 390, height: 844 } };

let db: ScratchDatabase | undefined;
let app: AppServer | undefined;

test.beforeAll(async () => {
	test.setTimeout(150_000);
	const why = appServerUnavailable();
	test.skip(why !== null, why ?? '');
	db = await scratchDatabase('cellsitter_e2e_outage');
	app = await startAppServer({ databaseUrl: db.url });
});

test.afterAll(async () => {
	await app?.stop();
	await db?.drop();
});

test('the app and the run screen come through a database outage, and the round logged meanwhile is stored once', async ({ browser }) => {
	test.setTimeout(120_000);
	const context = await browser.newContext({ ...phone, baseURL: app!.baseURL });
	const page = await context.newPage();
	const email = `outage-${randomUUID().slice(0, 8)}@e2e.cellsitter.test`;
	const run = await signUpWithRunningSession(context.request, app!.baseURL, email, PASSWORD);
	const readings = async () => {
		const answer = await context.request.get(`/api/w/${run.slug}/sessions/${run.sessionId}/readings`);
		expect(answer.status()).toBe(200);
		return ((await answer.json()).readings as { volts: number }[]).map((r) => r.volts).sort();
	};

	await page.goto(`/w/${run.slug}/sessions/${run.sessionId}`);
	const entry = page.getByRole('region', { name: 'Log readings' });
	await expect(entry.getByRole('button', { name: 'Save round' })).toBeEnabled({ timeout: 20_000 });

	const admin = postgres(process.env.DATABASE_URL!, { max: 1, onnotice: () => {} });
	try {
		await admin.unsafe(`alter database ${db!.name} with allow_connections false`);
		await admin`select pg_terminate_backend(pid) from pg_stat_activity where datname = ${db!.name} and pid <> pg_backend_pid()`;
		const outageEnds = Date.now() + OUTAGE_MS;

		// During the outage: the app answers, plainly, that it cannot serve now; a round waits on the phone.
		const during = await context.request.get(`/api/w/${run.slug}/sessions/${run.sessionId}/readings`);
		expect(during.status()).toBeGreaterThanOrEqual(500);
		for (const [i, v] of ['3.71', '3.62', '3.63', '3.64'].entries()) {
			const field = entry.getByLabel(`G${i + 1} volts per cell`);
			await field.fill(v);
			await field.press('Enter');
		}
		await entry.getByRole('button', { name: 'Save round' }).click();
		await expect(entry.getByText(/4 readings waiting to send/)).toBeVisible();
		await page.waitForTimeout(Math.max(0, outageEnds - Date.now()));
	} finally {
		await admin.unsafe(`alter database ${db!.name} with allow_connections true`);
		await admin.end();
	}

	// Back: the same process serves again, and the page's queue (it tries every 20 s) stores the round once.
	await expect.poll(async () => (await context.request.get('/login')).status(), { timeout: 20_000 }).toBe(200);
	await expect(entry.getByText('Saved 4 readings')).toBeVisible({ timeout: 40_000 });
	await expect(entry.getByText(/waiting to send/)).toHaveCount(0);
	expect(await readings()).toEqual([3.62, 3.63, 3.64, 3.71]);
	expect(app!.child.exitCode).toBeNull();
	await context.close();
});
