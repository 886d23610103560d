/**
 * A second copy of the built app with the demo workshop loaded, for browser tests that need the
 * demo's finished sessions. The test server's database is never empty (tests make their own
 * accounts), and the demo only loads into an empty one: so this makes a scratch database in the
 * same PostgreSQL, starts the same build on a free port with the demo switched on (the server
 * loads it at start, as `npm start` does) and, at stop, ends that process and drops the database.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { test } from '@playwright/test';
import postgres from 'postgres';

/** Where scripts/test.sh builds the app under test. */
const BUILD_DIR = process.env.E2E_BUILD_DIR ?? '.data/test-build';

export type DemoServer = { baseURL: string; password: string; stop: () => Promise<void> };

/** Why a demo server cannot start here (no database URL or no build), or null when it can. */
export function demoServerUnavailable(): string | null {
	if (!process.env.DATABASE_URL) return 'DATABASE_URL is not set (run through scripts/test.sh e2e)';
	if (!existsSync(join(BUILD_DIR, 'index.js'))) return `no built app in ${BUILD_DIR}`;
	return null;
}

function freePort(): Promise<number> {
	return new Promise((resolve, reject) => {
		const probe = createServer();
		probe.once('error', reject);
		probe.listen(0, '127.0.0.1', () => {
			const { port } = probe.address() as { port: number };
			probe.close(() => resolve(port));
		});
	});
}

async function waitForHttp(url: string, child: ChildProcess, seconds: number, log: () => string) {
	const until = Date.now() + seconds * 1000;
	while (Date.now() < until) {
		if (child.exitCode !== null) throw new Error(`the demo server exited (${child.exitCode}):\n${log()}`);
		try {
			const response = await fetch(url);
			if (response.ok) return;
		} catch {
			// not listening yet
		}
		await new Promise((r) => setTimeout(r, 500));
	}
	throw new Error(`the demo server did not answer at ${url} in ${seconds} s:\n${log()}`);
}

export async function startDemoServer(): Promise<DemoServer> {
	const shared = process.env.DATABASE_URL!;
	const name = `cellsitter_e2e_demo_${randomUUID().slice(0, 8)}`;
	const admin = postgres(shared, { max: 1, onnotice: () => {} });
	await admin.unsafe(`create database ${name}`);
	const url = new URL(shared);
	url.pathname = `/${name}`;
	const port = await freePort();
	const baseURL = `http://127.0.0.1:${port}`;
	const password = `demo-${randomUUID()}`;
	const dataDir = mkdtempSync(join(tmpdir(), 'cellsitter-e2e-demo-'));
	let output = '';
	const child = spawn(process.execPath, [BUILD_DIR], {
		env: {
			...process.env,
			DATABASE_URL: url.toString(),
			PORT: String(port),
			HOST: '127.0.0.1',
			ORIGIN: baseURL,
			CELLSITTER_DATA_DIR: dataDir,
			CELLSITTER_DEMO: '1',
			CELLSITTER_DEMO_PASSWORD: password
		},
		stdio: ['ignore', 'pipe', 'pipe']
	});
	const keep = (chunk: Buffer) => (output = (output + chunk.toString()).slice(-8000));
	child.stdout!.on('data', keep);
	child.stderr!.on('data', keep);

	const stop = async () => {
		if (child.exitCode === null) {
			const exited = new Promise((r) => child.once('exit', r));
			child.kill('SIGTERM');
			await Promise.race([exited, new Promise((r) => setTimeout(r, 15_000))]);
			if (child.exitCode === null) child.kill('SIGKILL');
		}
		await admin.unsafe(`drop database if exists ${name} with (force)`);
		await admin.end();
		rmSync(dataDir, { recursive: true, force: true });
	};
	try {
		await waitForHttp(`${baseURL}/`, child, 120, () => output);
	} catch (e) {
		await stop();
		throw e;
	}
	return { baseURL, password, stop };
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
