/**
 * Push on this device, in the browser: whether it can work here, and turning it on and off. The
 * subscription is the browser's (its push service's endpoint and the keys the server encrypts
 * with); the server keeps a copy per person (/api/push-subscriptions).
 */

/** The VAPID public key (base64url, as the server gives it) as the bytes `subscribe` takes. */
export function urlBase64ToUint8Array(base64url: string): Uint8Array<ArrayBuffer> {
	const standard = base64url.replace(/-/g, '+').replace(/_/g, '/');
	const binary = atob(standard + '='.repeat((4 - (standard.length % 4)) % 4));
	const bytes = new Uint8Array(new ArrayBuffer(binary.length));
	for (let i = 0; i < binary.length; i++) bytes[i] = binary.charCodeAt(i);
	return bytes;
}

/**
 * Why push cannot work in this browser, or 'possible'. Order matters: an iPhone over plain HTTP
 * needs HTTPS first, then the home screen.
 * - insecure: not a secure origin (plain HTTP from another machine) — no service worker, no push.
 * - home-screen: iOS / iPadOS Safari delivers web push only to an app added to the home screen.
 * - unsupported: this browser has no web push at all.
 * - denied: the person (or the browser) blocked notifications for this site.
 */
export type PushPossibility = 'possible' | 'insecure' | 'home-screen' | 'unsupported' | 'denied';

/** iPhone, iPod or iPad (iPadOS presents itself as a Mac with a touch screen). */
export function isAppleMobile(userAgent: string, maxTouchPoints: number): boolean {
	return /iPhone|iPad|iPod/.test(userAgent) || (/Macintosh/.test(userAgent) && maxTouchPoints > 1);
}

function isStandalone(): boolean {
	const nav = navigator as Navigator & { standalone?: boolean };
	return nav.standalone === true || window.matchMedia?.('(display-mode: standalone)').matches === true;
}

export function pushPossibility(): PushPossibility {
	if (window.isSecureContext === false) return 'insecure';
	if (isAppleMobile(navigator.userAgent, navigator.maxTouchPoints ?? 0) && !isStandalone()) return 'home-screen';
	if (!('serviceWorker' in navigator) || !('PushManager' in window) || !('Notification' in window)) return 'unsupported';
	if (Notification.permission === 'denied') return 'denied';
	return 'possible';
}

/** A name for this device from its browser, e.g. "Chrome on Android" (the person can tell them apart). */
export function deviceLabel(userAgent: string, maxTouchPoints = 0): string {
	const browser = /Edg\//.test(userAgent)
		? 'Edge'
		: /Firefox\/|FxiOS/.test(userAgent)
			? 'Firefox'
			: /SamsungBrowser/.test(userAgent)
				? 'Samsung Internet'
				: /Chrome\/|CriOS|Chromium\//.test(userAgent)
					? 'Chrome'
					: /Safari\//.test(userAgent)
						? 'Safari'
						: 'A browser';
	const system = /Android/.test(userAgent)
		? 'Android'
		: /iPhone|iPod/.test(userAgent)
			? 'iPhone'
			: /iPad/.test(userAgent) || (/Macintosh/.test(userAgent) && maxTouchPoints > 1)
				? 'iPad'
				: /Windows/.test(userAgent)
					? 'Windows'
					: /Macintosh/.test(userAgent)
						? 'Mac'
						: /Linux|X11/.test(userAgent)
							? 'Linux'
							: 'another system';
	return `${browser} on ${system}`;
}

type Outcome = { ok: true } | { ok: false; message: string };

const API = '/api/push-subscriptions';
const WORKER_WAIT_MS = 10_000;

/** This page's service worker registration, or null when none becomes active in time. */
async function registration(): Promise<ServiceWorkerRegistration | null> {
	const timeout = new Promise<null>((resolve) => setTimeout(() => resolve(null), WORKER_WAIT_MS));
	return Promise.race([navigator.serviceWorker.ready, timeout]);
}

/** The browser's subscription on this device, or null. */
export async function currentSubscription(): Promise<PushSubscription | null> {
	const reg = await registration();
	return reg ? reg.pushManager.getSubscription() : null;
}

async function messageOf(response: Response, fallback: string): Promise<string> {
	try {
		const body = (await response.json()) as { message?: unknown };
		return typeof body.message === 'string' ? body.message : fallback;
	} catch {
		return fallback;
	}
}

/** True when the server sends this person's alerts to `endpoint`. */
export async function serverKnows(endpoint: string): Promise<boolean> {
	const response = await fetch(API, { headers: { accept: 'application/json' } });
	if (!response.ok) return false;
	const { devices } = (await response.json()) as { devices: { endpoint: string }[] };
	return devices.some((d) => d.endpoint === endpoint);
}

function sameKey(a: ArrayBuffer | null | undefined, b: Uint8Array): boolean {
	if (!a || a.byteLength !== b.byteLength) return false;
	const left = new Uint8Array(a);
	return left.every((v, i) => v === b[i]);
}

/**
 * Turns push on for this device: asks for permission (call it from a tap — browsers ignore the
 * request otherwise), subscribes with the server's VAPID key and registers the subscription.
 */
export async function subscribeThisDevice(): Promise<Outcome> {
	const permission = await Notification.requestPermission();
	if (permission !== 'granted') {
		return {
			ok: false,
			message:
				permission === 'denied'
					? 'Notifications are blocked for this site, so alerts cannot show here. Allow them in the browser’s site settings, then try again.'
					: 'Notifications were not allowed. Tap the button again and choose Allow.'
		};
	}
	const reg = await registration();
	if (!reg) return { ok: false, message: 'The app’s offline helper (service worker) did not start. Reload the page and try again.' };
	const keyAnswer = await fetch(`${API}/key`, { headers: { accept: 'application/json' } });
	if (!keyAnswer.ok) return { ok: false, message: await messageOf(keyAnswer, 'The server did not give its push key. Try again in a moment.') };
	const serverKey = urlBase64ToUint8Array(((await keyAnswer.json()) as { publicKey: string }).publicKey);

	let subscription = await reg.pushManager.getSubscription();
	// A subscription made with an earlier server key cannot receive from this one: start over.
	if (subscription && !sameKey(subscription.options?.applicationServerKey, serverKey)) {
		await subscription.unsubscribe();
		subscription = null;
	}
	try {
		subscription ??= await reg.pushManager.subscribe({ userVisibleOnly: true, applicationServerKey: serverKey });
	} catch (e) {
		return { ok: false, message: `The browser could not subscribe to push (${e instanceof Error ? e.message : String(e)}). Try again later.` };
	}
	const saved = await fetch(API, {
		method: 'POST',
		headers: { 'content-type': 'application/json', accept: 'application/json' },
		body: JSON.stringify({ ...subscription.toJSON(), label: deviceLabel(navigator.userAgent, navigator.maxTouchPoints ?? 0) })
	});
	if (!saved.ok) return { ok: false, message: await messageOf(saved, 'The server did not keep this device. Try again in a moment.') };
	return { ok: true };
}

/** Turns push off for this device: the server forgets it first, then the browser's subscription ends. */
export async function unsubscribeThisDevice(): Promise<Outcome> {
	const subscription = await currentSubscription();
	if (!subscription) return { ok: true };
	const removed = await fetch(API, {
		method: 'DELETE',
		headers: { 'content-type': 'application/json', accept: 'application/json' },
		body: JSON.stringify({ endpoint: subscription.endpoint })
	});
	// 404: the server had already forgotten it (moved to another person, or the push service dropped it).
	if (!removed.ok && removed.status !== 404) {
		return { ok: false, message: await messageOf(removed, 'The server did not answer. Alerts still come here; try again in a moment.') };
	}
	await subscription.unsubscribe();
	return { ok: true };
}
