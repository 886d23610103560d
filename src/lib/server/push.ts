/**
 * Web Push from the server (RFC 8030 delivery, RFC 8291 aes128gcm payloads, RFC 8292 VAPID), through
 * web-push. The VAPID keys come from the environment or are made once and kept in the data folder
 * (docs/configuration.md, "Push notifications"). With CELLSITTER_FAKES=1, pushes to 127.0.0.1 go to
 * the local fake push service (tests/fakes/push.js), whose self-signed certificate is fetched
 * once from FAKES_URL/push/ca.pem and trusted for those requests only.
 */
import { createECDH, createHash, createPublicKey } from 'node:crypto';
import { link, mkdir, readFile, unlink, writeFile } from 'node:fs/promises';
import https from 'node:https';
import path from 'node:path';
import webpush from 'web-push';
import { serverEnv } from './env';

export type VapidKeys = { publicKey: string; privateKey: string; subject: string };

export type PushPayload = {
	title: string;
	body: string;
	url: string;
	tag: string;
	severity: 'info' | 'warning' | 'critical';
	alertId?: string;
};

export type PushSubscriptionKeys = { endpoint: string; p256dh: string; auth: string };

export type PushOptions = { ttlSeconds?: number; urgency?: 'normal' | 'high' };

export type PushResult = { ok: true; status: number } | { ok: false; gone: boolean; status: number | null; detail: string };

/** The file, under CELLSITTER_DATA_DIR, that keeps the keys the server made. */
export const VAPID_KEY_FILE = 'vapid-keys.json';
/** How long a push service may take to answer before the attempt counts as failed. */
const SEND_TIMEOUT_MS = 10_000;
/** How long the push service keeps a message for a phone that is off or out of reach. */
const DEFAULT_TTL_SECONDS = 60 * 60;
/**
 * The push services must carry 4096 encrypted bytes (RFC 8030 §7.2); aes128gcm adds 103 (header,
 * padding delimiter, tag). A longer body is cut, with an ellipsis, to keep the JSON under this.
 */
const MAX_PAYLOAD_BYTES = 3800;

const PUBLIC_KEY = /^B[A-Za-z0-9_-]{86}$/;
const PRIVATE_KEY = /^[A-Za-z0-9_-]{43}$/;

/** The public key that belongs to a private one (uncompressed P-256 point, base64url). */
function publicKeyOf(privateKey: string): string {
	const ecdh = createECDH('prime256v1');
	ecdh.setPrivateKey(Buffer.from(privateKey, 'base64url'));
	return ecdh.getPublicKey().toString('base64url');
}

function vapidSubject(): string {
	const env = serverEnv();
	if (env.VAPID_SUBJECT) return env.VAPID_SUBJECT;
	// Push services use the subject to reach whoever runs the server; an http: origin is not allowed.
	if (env.ORIGIN && new URL(env.ORIGIN).protocol === 'https:') return new URL(env.ORIGIN).origin;
	return 'mailto:alerts@localhost';
}

function parseKeyFile(text: string, file: string): { publicKey: string; privateKey: string } {
	let data: unknown;
	try {
		data = JSON.parse(text);
	} catch {
		data = null;
	}
	const keys = data as { publicKey?: unknown; privateKey?: unknown } | null;
	if (
		!keys ||
		typeof keys.publicKey !== 'string' ||
		typeof keys.privateKey !== 'string' ||
		!PUBLIC_KEY.test(keys.publicKey) ||
		!PRIVATE_KEY.test(keys.privateKey) ||
		publicKeyOf(keys.privateKey) !== keys.publicKey
	) {
		// Never replace it silently: new keys would invalidate every phone's subscription.
		throw new Error(
			`${file} does not hold a VAPID key pair. Restore it from a backup, or delete it to make new keys ` +
				`(every phone then has to turn push alerts on again). See docs/configuration.md.`
		);
	}
	return { publicKey: keys.publicKey, privateKey: keys.privateKey };
}

/**
 * Reads the kept key pair, or makes one. Two processes starting at once end with the same keys:
 * the pair is written to a file of its own and hard-linked into place, which fails with EEXIST
 * when another process got there first (then its file is read), and never shows a half-written file.
 */
async function keptKeys(dataDir: string): Promise<{ publicKey: string; privateKey: string }> {
	const file = path.resolve(dataDir, VAPID_KEY_FILE);
	try {
		return parseKeyFile(await readFile(file, 'utf8'), file);
	} catch (error) {
		if ((error as NodeJS.ErrnoException).code !== 'ENOENT') throw error;
	}
	await mkdir(path.dirname(file), { recursive: true, mode: 0o700 });
	const made = webpush.generateVAPIDKeys();
	const text = JSON.stringify({ ...made, createdAt: new Date().toISOString() }, null, '\t') + '\n';
	const temporary = `${file}.${process.pid}.${Math.random().toString(36).slice(2)}.tmp`;
	await writeFile(temporary, text, { mode: 0o600, flag: 'wx' });
	try {
		await link(temporary, file);
		return { publicKey: made.publicKey, privateKey: made.privateKey };
	} catch (error) {
		const code = (error as NodeJS.ErrnoException).code;
		if (code === 'EEXIST') return parseKeyFile(await readFile(file, 'utf8'), file);
		if (code !== 'EPERM' && code !== 'ENOTSUP' && code !== 'EXDEV') throw error;
		// A file system without hard links: an exclusive create (the loser reads the winner's).
		try {
			await writeFile(file, text, { mode: 0o600, flag: 'wx' });
			return { publicKey: made.publicKey, privateKey: made.privateKey };
		} catch (fallbackError) {
			if ((fallbackError as NodeJS.ErrnoException).code !== 'EEXIST') throw fallbackError;
			return parseKeyFile(await readFile(file, 'utf8'), file);
		}
	} finally {
		await unlink(temporary).catch(() => {});
	}
}

let keysPromise: Promise<VapidKeys> | undefined;

async function loadVapidKeys(): Promise<VapidKeys> {
	const env = serverEnv();
	const subject = vapidSubject();
	if (env.VAPID_PUBLIC_KEY && env.VAPID_PRIVATE_KEY) {
		if (publicKeyOf(env.VAPID_PRIVATE_KEY) !== env.VAPID_PUBLIC_KEY) {
			throw new Error('VAPID_PUBLIC_KEY is not the public key of VAPID_PRIVATE_KEY (see docs/configuration.md).');
		}
		return { publicKey: env.VAPID_PUBLIC_KEY, privateKey: env.VAPID_PRIVATE_KEY, subject };
	}
	return { ...(await keptKeys(env.CELLSITTER_DATA_DIR)), subject };
}

/**
 * The server's VAPID keys and subject: VAPID_PUBLIC_KEY / VAPID_PRIVATE_KEY / VAPID_SUBJECT, or a
 * pair made once into CELLSITTER_DATA_DIR/vapid-keys.json (mode 0600). Read once per process.
 */
export function vapidKeys(): Promise<VapidKeys> {
	keysPromise ??= loadVapidKeys().catch((error: unknown) => {
		keysPromise = undefined;
		throw error;
	});
	return keysPromise;
}

/** The public key a browser subscribes with (PushManager.subscribe's applicationServerKey). */
export async function vapidPublicKey(): Promise<string> {
	return (await vapidKeys()).publicKey;
}

/** Forgets the keys read so far, so the next vapidKeys() reads the environment and file again (tests only). */
export function forgetVapidKeys(): void {
	keysPromise = undefined;
}

function isLoopbackHost(hostname: string): boolean {
	return hostname === 'localhost' || hostname === '[::1]' || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(hostname);
}

/**
 * What is wrong with a push endpoint, in words, or null when it can be used: an https: URL
 * without user name or password, at most 2048 characters.
 */
export function pushEndpointProblem(endpoint: string): string | null {
	if (endpoint.length > 2048) return 'the push endpoint is longer than 2048 characters';
	let url: URL;
	try {
		url = new URL(endpoint);
	} catch {
		return 'the push endpoint is not a URL';
	}
	if (url.protocol !== 'https:') return 'the push endpoint is not an https: address';
	if (url.username || url.password) return 'the push endpoint carries a user name or password';
	return null;
}

// The fake push service's certificate, per FAKES_URL (tests may start fakes of their own).
const fakeAgents = new Map<string, Promise<https.Agent>>();

function fakeAgent(fakesUrl: string): Promise<https.Agent> {
	let agent = fakeAgents.get(fakesUrl);
	if (!agent) {
		agent = (async () => {
			const response = await fetch(new URL('/push/ca.pem', fakesUrl), { signal: AbortSignal.timeout(SEND_TIMEOUT_MS) });
			if (!response.ok) throw new Error(`the fake push service's certificate: ${response.status} from ${fakesUrl}`);
			return new https.Agent({ ca: await response.text() });
		})();
		fakeAgents.set(fakesUrl, agent);
		agent.catch(() => fakeAgents.delete(fakesUrl));
	}
	return agent;
}

/** TLS failures that mean the fakes restarted with a new certificate: fetch it again next time. */
const CERTIFICATE_ERRORS = new Set([
	'DEPTH_ZERO_SELF_SIGNED_CERT',
	'SELF_SIGNED_CERT_IN_CHAIN',
	'UNABLE_TO_VERIFY_LEAF_SIGNATURE',
	'UNABLE_TO_GET_ISSUER_CERT_LOCALLY',
	'CERT_SIGNATURE_FAILURE',
	'ERR_TLS_CERT_ALTNAME_INVALID'
]);

function encodePayload(payload: PushPayload): string {
	const chars = Array.from(payload.body);
	let keep = chars.length;
	let json = JSON.stringify(payload);
	// Every character cut takes at least one byte off the JSON, so cutting `excess` of them is enough.
	while (Buffer.byteLength(json) > MAX_PAYLOAD_BYTES && keep > 0) {
		keep = Math.max(0, keep - (Buffer.byteLength(json) - MAX_PAYLOAD_BYTES));
		json = JSON.stringify({ ...payload, body: chars.slice(0, keep).join('') + '…' });
	}
	if (Buffer.byteLength(json) > MAX_PAYLOAD_BYTES) throw new Error('push payload too large even without its body');
	return json;
}

/** What is wrong with a subscription's keys (from the browser), or null: p256dh a P-256 point, auth 16 bytes. */
function subscriptionKeysProblem(sub: PushSubscriptionKeys): string | null {
	const point = /^[A-Za-z0-9_-]+={0,2}$/.test(sub.p256dh) ? Buffer.from(sub.p256dh, 'base64url') : Buffer.alloc(0);
	if (point.length !== 65 || point[0] !== 4) return "the subscription's p256dh is not an uncompressed P-256 public key";
	try {
		createPublicKey({
			key: { kty: 'EC', crv: 'P-256', x: point.subarray(1, 33).toString('base64url'), y: point.subarray(33).toString('base64url') },
			format: 'jwk'
		});
	} catch {
		return "the subscription's p256dh is not a point on P-256";
	}
	const auth = /^[A-Za-z0-9_-]+={0,2}$/.test(sub.auth) ? Buffer.from(sub.auth, 'base64url') : Buffer.alloc(0);
	if (auth.length !== 16) return "the subscription's auth secret is not 16 bytes";
	return null;
}

/** A short stable Topic (≤ 32 base64url characters) per tag: a newer push replaces one still waiting. */
function topicOf(tag: string): string {
	return createHash('sha256').update(tag).digest('base64url').slice(0, 32);
}

/**
 * Sends one push. Never throws for a delivery failure: `ok: false` with `gone: true` when the
 * subscription no longer exists (404 / 410) or can never work (an endpoint that is not https:,
 * keys that are not P-256 / 16 bytes) — delete it — and `gone: false` for the rest (5xx, 429,
 * timeouts, refused connections, 400/401/403/413). Throws only for a payload too large even
 * without its body, or unusable VAPID settings (a wrong key file, keys that do not match).
 * Urgency is 'high' for critical alerts unless `options.urgency` says otherwise.
 */
export async function sendPush(sub: PushSubscriptionKeys, payload: PushPayload, options: PushOptions = {}): Promise<PushResult> {
	const body = encodePayload(payload);
	const problem = pushEndpointProblem(sub.endpoint) ?? subscriptionKeysProblem(sub);
	if (problem) return { ok: false, gone: true, status: null, detail: problem };

	const env = serverEnv();
	let agent: https.Agent | undefined;
	const toFake = env.CELLSITTER_FAKES && env.FAKES_URL && isLoopbackHost(new URL(sub.endpoint).hostname);
	if (toFake && env.FAKES_URL) {
		try {
			agent = await fakeAgent(env.FAKES_URL);
		} catch (error) {
			return { ok: false, gone: false, status: null, detail: error instanceof Error ? error.message : String(error) };
		}
	}

	const keys = await vapidKeys();
	try {
		const response = await webpush.sendNotification({ endpoint: sub.endpoint, keys: { p256dh: sub.p256dh, auth: sub.auth } }, body, {
			vapidDetails: { subject: keys.subject, publicKey: keys.publicKey, privateKey: keys.privateKey },
			contentEncoding: 'aes128gcm',
			TTL: options.ttlSeconds ?? DEFAULT_TTL_SECONDS,
			urgency: options.urgency ?? (payload.severity === 'critical' ? 'high' : 'normal'),
			topic: topicOf(payload.tag),
			timeout: SEND_TIMEOUT_MS,
			...(agent ? { agent } : {})
		});
		return { ok: true, status: response.statusCode };
	} catch (error) {
		if (error instanceof webpush.WebPushError) {
			const status = error.statusCode;
			const said = typeof error.body === 'string' && error.body ? `: ${error.body.slice(0, 200)}` : '';
			return { ok: false, gone: status === 404 || status === 410, status, detail: `push service answered ${status}${said}` };
		}
		const code = (error as NodeJS.ErrnoException)?.code;
		if (toFake && env.FAKES_URL && code && CERTIFICATE_ERRORS.has(code)) fakeAgents.delete(env.FAKES_URL);
		const message = error instanceof Error ? error.message : String(error);
		return { ok: false, gone: false, status: null, detail: code ? `${code}: ${message}` : message };
	}
}
