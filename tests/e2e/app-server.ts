/**
 * The built app as a child process of a test, on a scratch database of the test PostgreSQL: for
 * tests that need their own copy (the demo loaded, a server killed and started again, two instances
 * on one database). scripts/test.sh builds the app into .data/test-build and sets DATABASE_URL,
 * FAKES_URL and SMTP_URL in the Playwright process; a child gets that environment, a free port (or
 * the one asked for), ORIGIN for that port and a data folder of its own.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { expect, type APIRequestContext, type APIResponse } from '@playwright/test';
import postgres from 'postgres';

/** Where scripts/test.sh builds the app under test. */
export const BUILD_DIR = process.env.E2E_BUILD_DIR ?? '.data/test-build';

/** Why the built app cannot start here (no database URL or no build), or null when it can. */
export function appServerUnavailable(): string | null {
	if (!process.env.DATABASE_URL) return 'DATABASE_URL is not set (run through scripts/test.sh e2e)';
	if (!existsSync(join(BUILD_DIR, 'index.js'))) return `no built app in ${BUILD_DIR}`;
	return null;
}

export function freePort(): Promise<number> {
	return new Promise((resolve, reject) => {
		const probe = createServer();
		probe.once('error', reject);
		probe.listen(0, '127.0.0.1', () => {
			const { port } = probe.address() as { port: number };
			probe.close(() => resolve(port));
		});
	});
}

export type ScratchDatabase = { url: string; name: string; drop: () => Promise<void> };

/** A new, empty database beside the run's test database (the app migrates it when it starts). */
export async function scratchDatabase(prefix: string): Promise<ScratchDatabase> {
	const shared = process.env.DATABASE_URL!;
	const name = `${prefix}_${randomUUID().slice(0, 8)}`.replace(/[^a-z0-9_]/g, '_');
	const admin = postgres(shared, { max: 1, onnotice: () => {} });
	await admin.unsafe(`create database ${name}`);
	const url = new URL(shared);
	url.pathname = `/${name}`;
	return {
		url: url.toString(),
		name,
		drop: async () => {
			try {
				await admin.unsafe(`drop database if exists ${name} with (force)`);
			} finally {
				await admin.end();
			}
		}
	};
}

export type AppServer = {
	baseURL: string;
	port: number;
	child: ChildProcess;
	/** The last 8,000 characters the process wrote. */
	log: () => string;
	/** SIGKILL, and resolves once the process is gone: no shutdown hook runs. */
	kill: () => Promise<void>;
	/** SIGTERM (SIGKILL after 15 s), then removes its data folder. */
	stop: () => Promise<void>;
};

async function waitForHttp(url: string, child: ChildProcess, seconds: number, log: () => string) {
	const until = Date.now() + seconds * 1000;
	while (Date.now() < until) {
		if (child.exitCode !== null || child.signalCode !== null) throw new Error(`the app exited (${child.exitCode ?? child.signalCode}):\n${log()}`);
		try {
			const response = await fetch(url, { signal: AbortSignal.timeout(5000) });
			if (response.ok) return;
		} catch {
			// not listening yet
		}
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error(`the app did not answer at ${url} in ${seconds} s:\n${log()}`);
}

const gone = (child: ChildProcess) => child.exitCode !== null || child.signalCode !== null;

function exited(child: ChildProcess, ms: number): Promise<void> {
	if (gone(child)) return Promise.resolve();
	return new Promise((resolve) => {
		const timer = setTimeout(resolve, ms);
		child.once('exit', () => {
			clearTimeout(timer);
			resolve();
		});
	});
}

/**
 * Starts the built app with the run's environment plus `env` (jobs on, as `npm start` runs it,
 * unless `env` says CELLSITTER_JOBS=off), and waits until it answers.
 */
export async function startAppServer(opts: { databaseUrl: string; port?: number; env?: Record<string, string> }): Promise<AppServer> {
	const port = opts.port ?? (await freePort());
	const baseURL = `http://127.0.0.1:${port}`;
	const dataDir = mkdtempSync(join(tmpdir(), 'cellsitter-e2e-app-'));
	let output = '';
	const child = spawn(process.execPath, [BUILD_DIR], {
		env: {
			...process.env,
			DATABASE_URL: opts.databaseUrl,
			PORT: String(port),
			HOST: '127.0.0.1',
			ORIGIN: baseURL,
			CELLSITTER_DATA_DIR: dataDir,
			...opts.env
		},
		stdio: ['ignore', 'pipe', 'pipe']
	});
	const keep = (chunk: Buffer) => (output = (output + chunk.toString()).slice(-8000));
	child.stdout!.on('data', keep);
	child.stderr!.on('data', keep);
	const log = () => output;
	const kill = async () => {
		if (!gone(child)) child.kill('SIGKILL');
		await exited(child, 10_000);
	};
	const stop = async () => {
		if (!gone(child)) {
			child.kill('SIGTERM');
			await exited(child, 15_000);
			if (!gone(child)) await kill();
		}
		rmSync(dataDir, { recursive: true, force: true });
	};
	try {
		await waitForHttp(`${baseURL}/`, child, 120, log);
	} catch (e) {
		await stop();
		throw e;
	}
	return { baseURL, port, child, log, kill, stop };
}

// ---------------------------------------------------------------------------
// A workshop set up through the app's own forms and API (no browser)
// ---------------------------------------------------------------------------

export async function okJson<T = Record<string, unknown>>(response: APIResponse): Promise<T> {
	expect(response.ok(), `${response.status()} ${response.url()}: ${await response.text()}`).toBe(true);
	return (await response.json()) as T;
}

/** A form posted as a browser without script posts it; returns the answer (redirects not followed). */
export function postPageForm(api: APIRequestContext, baseURL: string, path: string, form: Record<string, string>) {
	return api.post(`${baseURL}${path}`, { form, headers: { origin: baseURL, accept: 'text/html' }, maxRedirects: 0 });
}

async function redirectOf(response: APIResponse): Promise<string> {
	expect(response.status(), await response.text()).toBe(303);
	return response.headers()['location'];
}

/** The session cookie `api` holds for `baseURL`, as a Cookie header (for fetch). */
export async function cookieHeader(api: APIRequestContext, baseURL: string): Promise<string> {
	const { cookies } = await api.storageState();
	const host = new URL(baseURL).hostname;
	return cookies
		.filter((c) => c.domain.replace(/^\./, '') === host)
		.map((c) => `${c.name}=${c.value}`)
		.join('; ');
}

export type RunningSession = { slug: string; sessionId: string; packId: string; series: number };

/**
 * Signs up `email` (a new workshop, UTC) in `api` and sets up, over the API: an NMC cell spec, a
 * `series`S1P pack with its cells placed, a bench supply, a one-at-a-time session started with its
 * first step running. The account is the session's planner, so it is on watch and gets its alerts.
 */
export async function signUpWithRunningSession(api: APIRequestContext, baseURL: string, email: string, password: string, series = 4): Promise<RunningSession> {
	const home = await redirectOf(
		await postPageForm(api, baseURL, '/signup', { name: 'Kit Tester', email, password, workshopName: 'Kill Bench', timeZone: 'UTC', invitation: '' })
	);
	const slug = home.split('/')[2];
	const specAt = await redirectOf(
		await postPageForm(api, baseURL, `/w/${slug}/cell-specs/new?next=new-pack`, {
			name: 'Stress 21700',
			chemistry: 'builtin:nmc',
			capacityAh: '4',
			maxChargeAmps: '4',
			maxContinuousAmps: '15',
			maxBurstAmps: '30'
		})
	);
	const cellSpecId = new URL(specAt, baseURL).searchParams.get('spec');
	const base = `${baseURL}/api/w/${slug}`;
	const { pack } = await okJson<{ pack: { id: string } }>(
		await api.post(`${base}/packs`, { data: { name: 'Stress pack', cellSpecId, series, parallel: 1, bmsFitted: false, status: 'building' } })
	);
	const cells = Array.from({ length: series }, (_, i) => ({ label: `S${i + 1}`, volts: 3.6 + (i % 3) * 0.005 }));
	await okJson(await api.post(`${base}/packs/${pack.id}/cells`, { data: { cells } }));
	const proposal = await okJson<{ groups: { cellIds: string[] }[]; version: string }>(await api.post(`${base}/packs/${pack.id}/matching`, { data: {} }));
	await okJson(await api.put(`${base}/packs/${pack.id}/matching`, { data: { groups: proposal.groups.map((g) => g.cellIds), version: proposal.version } }));
	const { charger } = await okJson<{ charger: { id: string; channels: { id: string }[] } }>(
		await api.post(`${base}/chargers`, { data: { name: 'Bench supply', kind: 'bench-supply', channels: [{ name: 'Output', maxVolts: 30, maxAmps: 5 }] } })
	);
	// Planned now on the supply's one channel at 2 A: the first step starts at once.
	const plan = { packId: pack.id, kind: 'one-at-a-time', chargerId: charger.id, channelIds: charger.channels.map((c) => c.id), amps: 2 };
	const planned = await api.post(`${base}/sessions`, { data: { ...plan, plannedStart: new Date().toISOString(), name: 'Stress charge' } });
	const { session, steps } = await okJson<{ session: { id: string }; steps: { id: string }[] }>(planned);
	await okJson(await api.post(`${base}/sessions/${session.id}/status`, { data: { action: 'start' } }));
	await okJson(await api.post(`${base}/sessions/${session.id}/steps/${steps[0].id}`, { data: { action: 'start' } }));
	return { slug, sessionId: session.id, packId: pack.id, series };
}

/** A device token for the session (docs/api.md, Device tokens). */
export async function issueDeviceToken(api: APIRequestContext, baseURL: string, run: RunningSession, name = 'Stress logger'): Promise<string> {
	const { token } = await okJson<{ token: string }>(
		await api.post(`${baseURL}/api/w/${run.slug}/sessions/${run.sessionId}/tokens`, { data: { name } })
	);
	return token;
}
