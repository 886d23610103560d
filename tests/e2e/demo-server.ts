/**
 * A second copy of the built app with the demo workshop loaded, for browser tests that need the
 * demo's finished sessions. The test server's database is never empty (tests make their own
 * accounts), and the demo only loads into an empty one: so this makes a scratch database in the
 * same PostgreSQL, starts the same build on a free port with the demo switched on (the server
 * loads it at start, as `npm start` does) and, at stop, ends that process and drops the database.
 */
import { randomUUID } from 'node:crypto';
import { test } from '@playwright/test';
import { appServerUnavailable, scratchDatabase, startAppServer } from './app-server';

export type DemoServer = { baseURL: string; password: string; stop: () => Promise<void> };

/** Why a demo server cannot start here (no database URL or no build), or null when it can. */
export const demoServerUnavailable = appServerUnavailable;

export async function startDemoServer(): Promise<DemoServer> {
	const database = await scratchDatabase('cellsitter_e2e_demo');
	const password = `demo-${randomUUID()}`;
	const server = await startAppServer({
		databaseUrl: database.url,
		env: { CELLSITTER_DEMO: '1', CELLSITTER_DEMO_PASSWORD: password }
	}).catch(async (e) => {
		await database.drop();
		throw e;
	});
	const stop = async () => {
		await server.stop();
		await database.drop();
	};
	return { baseURL: server.baseURL, password, stop };
}

/** Where the run's shared demo server listens (global-setup.ts), when it started one. */
const SHARED_URL = 'E2E_DEMO_URL';
const SHARED_PASSWORD = 'E2E_DEMO_PASSWORD';

/**
 * The whole run's demo server, started once by Playwright's global setup (global-setup.ts) when
 * any test file uses it: starting one per file cost most of a minute of the run each.
 */
export async function startSharedDemoServer(): Promise<(() => Promise<void>) | undefined> {
	if (demoServerUnavailable()) return undefined;
	const demo = await startDemoServer();
	process.env[SHARED_URL] = demo.baseURL;
	process.env[SHARED_PASSWORD] = demo.password;
	return demo.stop;
}

/**
 * For a test file: the run's shared demo server, or else one of the file's own (started before
 * the first test, stopped after the last; the tests are skipped where it cannot start). Call at
 * the top of the file; the getter answers inside a test.
 */
export function useDemoServer(): () => DemoServer {
	let demo: DemoServer | undefined;
	test.describe.configure({ mode: 'serial' });
	const shared = process.env[SHARED_URL];
	if (shared) {
		const kept = { baseURL: shared, password: process.env[SHARED_PASSWORD] ?? '', stop: async () => {} };
		return () => kept;
	}
	test.beforeAll(async () => {
		test.setTimeout(180_000);
		const why = demoServerUnavailable();
		test.skip(why !== null, why ?? '');
		demo = await startDemoServer();
	});
	test.afterAll(async () => {
		await demo?.stop();
	});
	return () => demo!;
}
