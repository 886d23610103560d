// Web Push from the server ($lib/server/push) through the local fake push service
// (tests/fakes/push.js), started here in-process on free ports so an outage or a restart never
// touches other test files. web-push, TLS and the aes128gcm encryption are all real; the fake
// decrypts with the subscription's own private key, as a phone would. No database needed.
import { mkdtemp, readFile, readdir, rm, stat, writeFile } from 'node:fs/promises';
import https from 'node:https';
import { createServer } from 'node:net';
import os from 'node:os';
import path from 'node:path';
import webpush from 'web-push';
import { afterAll, afterEach, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { rereadServerEnv } from '$lib/server/env';
import { fakePushes, makeFakePushSubscription, type FakePushSubscription } from '$lib/server/fakes';
import { forgetVapidKeys, sendPush, vapidKeys, vapidPublicKey, type PushPayload } from '$lib/server/push';
import { load as mailboxLoad } from '../../src/routes/fakes/mailbox/+page.server';
import { startFakes, type RunningFakes } from '../fakes/server.js';

const savedEnv = { ...process.env };
let fakes: RunningFakes;
let dataDir: string;

function setEnv(vars: Record<string, string | undefined>) {
	for (const [key, value] of Object.entries(vars)) {
		if (value === undefined) delete process.env[key];
		else process.env[key] = value;
	}
	rereadServerEnv();
	forgetVapidKeys();
}

async function freshDataDir(): Promise<string> {
	const dir = await mkdtemp(path.join(os.tmpdir(), 'cellsitter-push-'));
	setEnv({ CELLSITTER_DATA_DIR: dir });
	return dir;
}

beforeAll(async () => {
	fakes = await startFakes({ smtpPort: 0, httpPort: 0, pushPort: 0 });
	dataDir = await mkdtemp(path.join(os.tmpdir(), 'cellsitter-push-'));
});

beforeEach(() => {
	setEnv({
		CELLSITTER_FAKES: '1',
		FAKES_URL: fakes.httpUrl,
		CELLSITTER_DATA_DIR: dataDir,
		ORIGIN: 'http://127.0.0.1:3100',
		VAPID_PUBLIC_KEY: undefined,
		VAPID_PRIVATE_KEY: undefined,
		VAPID_SUBJECT: undefined
	});
});

afterEach(async () => {
	await fetch(`${fakes.httpUrl}/push/outage`, { method: 'POST', body: JSON.stringify({ seconds: 0 }) });
});

afterAll(async () => {
	process.env = { ...savedEnv };
	rereadServerEnv();
	forgetVapidKeys();
	await fakes?.close();
	await rm(dataDir, { recursive: true, force: true });
});

const asKeys = (s: FakePushSubscription) => ({ endpoint: s.endpoint, p256dh: s.keys.p256dh, auth: s.keys.auth });

const critical: PushPayload = {
	title: 'Act now: Garage pack, group 7 over its voltage limit',
	body: 'Group 7 is at 4.31 V, over the 4.25 V limit. Disconnect the charger from group 7; if there is smoke or flame, get out, keep out and call the fire service.',
	url: '/w/larkfield/alerts/42',
	tag: 'alert-42',
	severity: 'critical',
	alertId: '42'
};

/** A port on 127.0.0.1 nothing listens on (taken, then given back). */
async function closedPort(): Promise<number> {
	const server = createServer();
	await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
	const { port } = server.address() as { port: number };
	await new Promise((resolve) => server.close(resolve));
	return port;
}

describe('sendPush through the fake push service', () => {
	it('delivers an encrypted payload the subscription can read, urgent when critical', async () => {
		const subscription = await makeFakePushSubscription();
		expect(subscription.endpoint.startsWith(`${fakes.pushUrl}/push/`)).toBe(true);

		const result = await sendPush(asKeys(subscription), critical, { ttlSeconds: 900 });
		expect(result).toEqual({ ok: true, status: 201 });

		const [push, ...older] = await fakePushes(subscription.endpoint);
		expect(older).toEqual([]);
		expect(push.json).toEqual(critical);
		expect(JSON.parse(push.payload)).toEqual(critical);
		expect(push.urgency).toBe('high');
		expect(push.ttl).toBe(900);
		// The tag becomes a Topic, so a newer push for the same alert replaces one still waiting.
		expect(push.topic).toMatch(/^[A-Za-z0-9_-]{32}$/);
	});

	it('sends a warning at normal urgency unless asked, and keeps each endpoint apart', async () => {
		const one = await makeFakePushSubscription();
		const two = await makeFakePushSubscription();
		const warning: PushPayload = { ...critical, severity: 'warning', title: 'Watch: group 3 warm', tag: 'alert-43', alertId: '43' };
		expect((await sendPush(asKeys(one), warning)).ok).toBe(true);
		expect((await sendPush(asKeys(two), warning, { urgency: 'high' })).ok).toBe(true);

		const [first] = await fakePushes(one.endpoint);
		const [second] = await fakePushes(two.endpoint);
		expect(first.urgency).toBe('normal');
		expect(second.urgency).toBe('high');
		expect(first.ttl).toBe(3600);
		// Newest first.
		const all = await fakePushes();
		expect(all.findIndex((p) => p.endpoint === two.endpoint)).toBeLessThan(all.findIndex((p) => p.endpoint === one.endpoint));
		// Same tag, same Topic; another tag, another.
		expect(first.topic).toBe(second.topic);
		expect((await sendPush(asKeys(one), { ...warning, tag: 'alert-44' })).ok).toBe(true);
		const [third] = await fakePushes(one.endpoint);
		expect((third.json as PushPayload).tag).toBe('alert-44');
		expect(third.topic).not.toBe(first.topic);
	});

	it('cuts a body too long for a push, and still delivers it', async () => {
		const subscription = await makeFakePushSubscription();
		const long = { ...critical, body: 'Ω'.repeat(3000) };
		expect((await sendPush(asKeys(subscription), long)).ok).toBe(true);
		const [push] = await fakePushes(subscription.endpoint);
		const body = (push.json as PushPayload).body;
		expect(body.endsWith('…')).toBe(true);
		expect(body.length).toBeLessThan(3000);
		expect(body.startsWith('ΩΩΩ')).toBe(true);
		expect(Buffer.byteLength(push.payload)).toBeLessThanOrEqual(3800);
	});

	it('says gone for an unknown or expired subscription (410)', async () => {
		const unknown = await sendPush({ ...asKeys(await makeFakePushSubscription()), endpoint: `${fakes.pushUrl}/push/never-made` }, critical);
		expect(unknown).toMatchObject({ ok: false, gone: true, status: 410 });

		const subscription = await makeFakePushSubscription();
		const id = subscription.endpoint.split('/push/')[1];
		expect((await fetch(`${fakes.httpUrl}/push/subscriptions/${id}`, { method: 'DELETE' })).status).toBe(200);
		const expired = await sendPush(asKeys(subscription), critical);
		expect(expired).toMatchObject({ ok: false, gone: true, status: 410 });
		expect(await fakePushes(subscription.endpoint)).toEqual([]);
	});

	it('fails without gone during an outage, and delivers once it is over', async () => {
		const subscription = await makeFakePushSubscription();
		const outage = await fetch(`${fakes.httpUrl}/push/outage`, { method: 'POST', body: JSON.stringify({ seconds: 1 }) });
		expect(outage.status).toBe(200);

		const during = await sendPush(asKeys(subscription), critical);
		expect(during).toMatchObject({ ok: false, gone: false, status: 503 });
		if (!during.ok) expect(during.detail).toContain('503');
		expect(await fakePushes(subscription.endpoint)).toEqual([]);

		await new Promise((resolve) => setTimeout(resolve, 1100));
		expect(await sendPush(asKeys(subscription), critical)).toEqual({ ok: true, status: 201 });
		expect(await fakePushes(subscription.endpoint)).toHaveLength(1);
	});

	it('fails without gone when nothing answers, and never throws', async () => {
		const subscription = await makeFakePushSubscription();
		const port = await closedPort();
		const result = await sendPush({ ...asKeys(subscription), endpoint: `https://127.0.0.1:${port}/push/x` }, critical);
		expect(result).toMatchObject({ ok: false, gone: false, status: null });
		if (!result.ok) expect(result.detail).toMatch(/ECONNREFUSED/);
	});

	it('refuses endpoints that are not https and keys that are not a subscription’s, as gone, sending nothing', async () => {
		const subscription = await makeFakePushSubscription();
		const before = (await fakePushes()).length;
		const plain = await sendPush({ ...asKeys(subscription), endpoint: subscription.endpoint.replace('https:', 'http:') }, critical);
		expect(plain).toMatchObject({ ok: false, gone: true, status: null });
		const badKey = await sendPush({ ...asKeys(subscription), p256dh: subscription.keys.p256dh.slice(0, 40) }, critical);
		expect(badKey).toMatchObject({ ok: false, gone: true, status: null });
		const badAuth = await sendPush({ ...asKeys(subscription), auth: 'c2hvcnQ' }, critical);
		expect(badAuth).toMatchObject({ ok: false, gone: true, status: null });
		expect(await fakePushes()).toHaveLength(before);
	});

	it('is refused by a subscription made for other VAPID keys (401, not gone)', async () => {
		const mine = await makeFakePushSubscription({ applicationServerKey: await vapidPublicKey() });
		expect((await sendPush(asKeys(mine), critical)).ok).toBe(true);

		const other = await makeFakePushSubscription({ applicationServerKey: webpush.generateVAPIDKeys().publicKey });
		const refused = await sendPush(asKeys(other), critical);
		expect(refused).toMatchObject({ ok: false, gone: false, status: 401 });
		expect(await fakePushes(other.endpoint)).toEqual([]);
	});

	it('trusts a restarted fake service’s new certificate after one failed attempt', async () => {
		const httpPort = fakes.httpPort;
		const subscription = await makeFakePushSubscription();
		expect((await sendPush(asKeys(subscription), critical)).ok).toBe(true);

		await fakes.close();
		fakes = await startFakes({ smtpPort: 0, httpPort, pushPort: 0 });
		const again = await makeFakePushSubscription();
		const first = await sendPush(asKeys(again), critical);
		expect(first).toMatchObject({ ok: false, gone: false, status: null });
		if (!first.ok) expect(first.detail).toMatch(/certificate|self[- ]signed/i);
		expect(await sendPush(asKeys(again), critical)).toEqual({ ok: true, status: 201 });
	});
});

describe('the fake push service checks what it gets', () => {
	async function post(endpoint: string, headers: Record<string, string>, body = Buffer.from('x')) {
		return new Promise<{ status: number; text: string }>((resolve, reject) => {
			const request = https.request(endpoint, { method: 'POST', headers, ca: fakes.pushCa }, (response) => {
				let text = '';
				response.on('data', (chunk) => (text += chunk));
				response.on('end', () => resolve({ status: response.statusCode ?? 0, text }));
			});
			request.on('error', reject);
			request.end(body);
		});
	}

	it('refuses a push without VAPID (401), with a wrong audience (401) and without TTL (400)', async () => {
		const subscription = await makeFakePushSubscription();
		const keys = await vapidKeys();
		const details = (audience: string) =>
			webpush.getVapidHeaders(audience, keys.subject, keys.publicKey, keys.privateKey, 'aes128gcm').Authorization;

		const bare = await post(subscription.endpoint, { ttl: '60', 'content-encoding': 'aes128gcm' });
		expect(bare.status).toBe(401);

		const elsewhere = await post(subscription.endpoint, {
			ttl: '60',
			'content-encoding': 'aes128gcm',
			authorization: details('https://push.example.org')
		});
		expect(elsewhere.status).toBe(401);
		expect(elsewhere.text).toContain('aud');

		const noTtl = await post(subscription.endpoint, { 'content-encoding': 'aes128gcm', authorization: details(fakes.pushUrl) });
		expect(noTtl.status).toBe(400);

		const notEncrypted = await post(subscription.endpoint, {
			ttl: '60',
			'content-encoding': 'aes128gcm',
			authorization: details(fakes.pushUrl)
		});
		expect(notEncrypted.status).toBe(400);
		expect(await fakePushes(subscription.endpoint)).toEqual([]);
	});
});

describe('the local mailbox page', () => {
	type Loaded = Exclude<Awaited<ReturnType<typeof mailboxLoad>>, void>;
	const loadPage = async () => (await mailboxLoad({ url: new URL('http://127.0.0.1:3100/fakes/mailbox') } as Parameters<typeof mailboxLoad>[0])) as Loaded;

	it('lists the pushes that arrived, newest first, linking only safe addresses', async () => {
		const subscription = await makeFakePushSubscription();
		const sneaky = { ...critical, title: 'Second one', url: 'javascript:alert(1)', tag: 'alert-77' };
		expect((await sendPush(asKeys(subscription), critical)).ok).toBe(true);
		expect((await sendPush(asKeys(subscription), sneaky)).ok).toBe(true);

		const page = await loadPage();
		expect(page.pushProblem).toBeNull();
		const [newest, older] = page.pushes;
		expect(newest).toMatchObject({ title: 'Second one', url: 'javascript:alert(1)', linkable: false, severity: 'critical', urgency: 'high' });
		expect(older).toMatchObject({ title: critical.title, body: critical.body, url: critical.url, linkable: true });

		expect((await fetch(`${fakes.httpUrl}/pushes`, { method: 'DELETE' })).status).toBe(200);
		expect((await loadPage()).pushes).toEqual([]);
	});
});

describe('VAPID keys', () => {
	it('are made once into the data folder (0600) and stay the same across calls and re-reads', async () => {
		const dir = await freshDataDir();
		try {
			const first = await vapidKeys();
			expect(first.publicKey).toMatch(/^B[A-Za-z0-9_-]{86}$/);
			expect(first.privateKey).toMatch(/^[A-Za-z0-9_-]{43}$/);
			expect(first.subject).toBe('mailto:alerts@localhost');

			const file = path.join(dir, 'vapid-keys.json');
			expect((await stat(file)).mode & 0o777).toBe(0o600);
			expect(JSON.parse(await readFile(file, 'utf8'))).toMatchObject({ publicKey: first.publicKey, privateKey: first.privateKey });

			expect(await vapidKeys()).toEqual(first);
			forgetVapidKeys();
			expect(await vapidKeys()).toEqual(first);
			expect(await vapidPublicKey()).toBe(first.publicKey);
			// Nothing else left behind (no temporary files).
			expect(await readdir(dir)).toEqual(['vapid-keys.json']);
		} finally {
			await rm(dir, { recursive: true, force: true });
		}
	});

	it('come out the same when two first reads race (as two processes starting at once)', async () => {
		for (let round = 0; round < 5; round++) {
			const dir = await freshDataDir();
			try {
				const racers = [];
				for (let i = 0; i < 4; i++) {
					forgetVapidKeys();
					racers.push(vapidKeys());
				}
				const keys = await Promise.all(racers);
				for (const k of keys) expect(k).toEqual(keys[0]);
				forgetVapidKeys();
				expect(await vapidKeys()).toEqual(keys[0]);
				expect(await readdir(dir)).toEqual(['vapid-keys.json']);
			} finally {
				await rm(dir, { recursive: true, force: true });
			}
		}
	});

	it('come from the environment when set, and a pair that does not match is refused', async () => {
		const dir = await freshDataDir();
		try {
			const pair = webpush.generateVAPIDKeys();
			setEnv({ VAPID_PUBLIC_KEY: pair.publicKey, VAPID_PRIVATE_KEY: pair.privateKey, VAPID_SUBJECT: 'mailto:owner@larkfield.test' });
			expect(await vapidKeys()).toEqual({ ...pair, subject: 'mailto:owner@larkfield.test' });
			expect(await readdir(dir)).toEqual([]);

			setEnv({ VAPID_PUBLIC_KEY: webpush.generateVAPIDKeys().publicKey });
			await expect(vapidKeys()).rejects.toThrow(/VAPID_PUBLIC_KEY is not the public key of VAPID_PRIVATE_KEY/);

			setEnv({ VAPID_PUBLIC_KEY: undefined });
			await expect(vapidKeys()).rejects.toThrow(/VAPID_PUBLIC_KEY and VAPID_PRIVATE_KEY, or neither/);
		} finally {
			await rm(dir, { recursive: true, force: true });
		}
	});

	it('take the subject from an https ORIGIN, and refuse a damaged key file without replacing it', async () => {
		const dir = await freshDataDir();
		try {
			setEnv({ ORIGIN: 'https://bench.example.org/some/path' });
			expect((await vapidKeys()).subject).toBe('https://bench.example.org');

			const file = path.join(dir, 'vapid-keys.json');
			await writeFile(file, '{"publicKey": "B-not-a-key"}');
			forgetVapidKeys();
			await expect(vapidKeys()).rejects.toThrow(/does not hold a VAPID key pair/);
			expect(await readFile(file, 'utf8')).toBe('{"publicKey": "B-not-a-key"}');
		} finally {
			await rm(dir, { recursive: true, force: true });
		}
	});
});
