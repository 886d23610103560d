/// <reference types="@sveltejs/kit" />
/// <reference no-default-lib="true"/>
/// <reference lib="esnext" />
/// <reference lib="webworker" />

/**
 * Cellsitter's service worker (SvelteKit's own): keeps the app shell, and the run screen's last
 * page and data, so that the run screen opens without a connection showing the groups it showed.
 * Everything else goes to the network untouched; requests other than GET (form actions, the
 * readings API — the page's own queue sends those) are never cached. A secure origin is needed
 * for any of this (docs/deploy.md).
 */
import { build, files, version } from '$service-worker';

const sw = self as unknown as ServiceWorkerGlobalScope;

const PREFIX = 'cellsitter-';
/** Built JS/CSS and static files of this version. */
const SHELL = `${PREFIX}shell-${version}`;
/** The run screens last seen: their HTML and __data.json (of this version: the HTML names its assets). */
const RUN = `${PREFIX}run-${version}`;
const ASSETS = new Set([...build, ...files]);
/** A run screen, or its data: /w/{workshop}/sessions/{id}[/__data.json]. */
const RUN_PATH = /^\/w\/[a-z0-9-]{1,48}\/sessions\/[a-z2-7]{24}\/?(__data\.json)?$/;
/** On a slow connection the cached copy is shown after this long; the network answer still updates it. */
const NETWORK_WAIT_MS = 4000;

sw.addEventListener('install', (event) => {
	event.waitUntil(
		caches
			.open(SHELL)
			.then((cache) => cache.addAll([...ASSETS]))
			.then(() => sw.skipWaiting())
	);
});

sw.addEventListener('activate', (event) => {
	event.waitUntil(
		(async () => {
			for (const key of await caches.keys()) {
				if (key.startsWith(PREFIX) && key !== SHELL && key !== RUN) await caches.delete(key);
			}
			await sw.clients.claim();
		})()
	);
});

const isData = (url: URL) => url.pathname.endsWith('/__data.json');

/**
 * The cache key of a run page or its data. Data keeps its query: SvelteKit's
 * ?x-sveltekit-invalidated=… mask says which parts the answer holds, so only the same request may
 * be answered from it; the data without a query (every part) is the fallback.
 */
function runKey(url: URL, withQuery = true): string {
	return url.origin + url.pathname.replace(/\/$/, '') + (withQuery && isData(url) ? url.search : '');
}

/** Keeps a good answer of a run page; a redirect (signed out) or a refusal drops what was kept. */
async function keepRunCopy(url: URL, response: Response): Promise<void> {
	const cache = await caches.open(RUN);
	if (response.ok && !response.redirected && response.type === 'basic') await cache.put(runKey(url), response);
	else if (response.status === 401 || response.status === 403 || response.status === 404 || response.type === 'opaqueredirect')
		await cache.delete(runKey(url));
}

/** The kept copy, marked so that the page knows it is one (it then shows the newest kept data). */
async function keptCopy(url: URL): Promise<Response | undefined> {
	const cache = await caches.open(RUN);
	const hit = (await cache.match(runKey(url))) ?? (isData(url) ? await cache.match(runKey(url, false)) : undefined);
	if (!hit || isData(url)) return hit;
	const html = (await hit.text()).replace('<head>', '<head><meta name="cellsitter-offline-copy" content="1">');
	return new Response(html, { status: 200, headers: hit.headers });
}

async function networkFirst(event: FetchEvent, url: URL): Promise<Response> {
	const network = fetch(event.request).then((response) => {
		event.waitUntil(keepRunCopy(url, response.clone()));
		return response;
	});
	const slow = new Promise<Response | undefined>((resolve) => setTimeout(() => resolve(keptCopy(url)), NETWORK_WAIT_MS));
	try {
		const first = await Promise.race([network, slow]);
		if (first) return first;
		return await network;
	} catch {
		const copy = await keptCopy(url);
		if (copy) return copy;
		return new Response('You are offline and this page was not kept for offline use. Reconnect and reload.', {
			status: 503,
			headers: { 'content-type': 'text/plain; charset=utf-8' }
		});
	}
}

sw.addEventListener('fetch', (event) => {
	const url = new URL(event.request.url);
	if (url.origin !== sw.location.origin) return;
	// Signing out forgets the kept run screens (they hold the workshop's data).
	if (url.pathname === '/logout') {
		event.waitUntil(caches.delete(RUN));
		return;
	}
	if (event.request.method !== 'GET') return;
	if (ASSETS.has(url.pathname)) {
		event.respondWith(
			caches.match(url.pathname, { cacheName: SHELL }).then((hit) => hit ?? fetch(event.request))
		);
		return;
	}
	if (RUN_PATH.test(url.pathname)) event.respondWith(networkFirst(event, url));
});

/**
 * The run page asks to be kept when it opens: its first load came before this worker controlled
 * the page, so the page and its data are fetched once more here.
 */
sw.addEventListener('message', (event) => {
	const data = event.data as { type?: unknown; path?: unknown } | null;
	if (data?.type !== 'keep-run-page' || typeof data.path !== 'string') return;
	const path = data.path.replace(/\/$/, '');
	if (!RUN_PATH.test(path)) return;
	event.waitUntil(
		Promise.all(
			[path, `${path}/__data.json`].map(async (p) => {
				const url = new URL(p, sw.location.origin);
				try {
					const response = await fetch(url, { credentials: 'same-origin', headers: p === path ? { accept: 'text/html' } : {} });
					await keepRunCopy(url, response);
				} catch {
					// Offline already: what was kept stays.
				}
			})
		)
	);
});

/**
 * Alerts by web push. The payload is the server's JSON (src/lib/server/push.ts, PushPayload). A
 * push must always show a notification (browsers revoke the subscription of a worker that shows
 * none), so an unreadable payload still shows a plain one that opens the alerts.
 */
type AlertPush = { title: string; body: string; url: string; tag: string; severity: 'info' | 'warning' | 'critical'; alertId?: string };

function readPush(data: PushMessageData | null): AlertPush | null {
	try {
		const value = data?.json() as Partial<Record<keyof AlertPush, unknown>> | undefined;
		if (!value || typeof value !== 'object') return null;
		const { title, body, url, tag, severity, alertId } = value;
		if (typeof title !== 'string' || typeof body !== 'string' || typeof url !== 'string' || typeof tag !== 'string') return null;
		if (severity !== 'info' && severity !== 'warning' && severity !== 'critical') return null;
		return { title, body, url, tag, severity, alertId: typeof alertId === 'string' ? alertId : undefined };
	} catch {
		return null;
	}
}

/** The whole same-origin URL to open, or the start page's for anything else (never another site). */
function sameOriginUrl(raw: unknown): string {
	const start = new URL('/', sw.location.origin).href;
	if (typeof raw !== 'string') return start;
	try {
		const url = new URL(raw, sw.location.origin);
		return url.origin === sw.location.origin ? url.href : start;
	} catch {
		return start;
	}
}

sw.addEventListener('push', (event) => {
	const alert = readPush(event.data);
	const critical = alert?.severity === 'critical';
	// `renotify` is in the Notifications spec but not yet in TypeScript's lib.
	const options: NotificationOptions & { renotify?: boolean } = {
		body: alert?.body || 'Open Cellsitter to see what happened.',
		// Never empty: a notification that renotifies must have a tag, or showing it fails.
		tag: alert?.tag || 'cellsitter-alert',
		data: { url: sameOriginUrl(alert?.url ?? '/'), alertId: alert?.alertId },
		icon: '/icons/icon-192.png',
		badge: '/icons/badge-96.png',
		// A critical alert stays on screen until someone acts, and sounds again when it replaces one.
		requireInteraction: critical,
		renotify: critical
	};
	event.waitUntil(sw.registration.showNotification(alert?.title || 'Cellsitter alert', options));
});

sw.addEventListener('notificationclick', (event) => {
	event.notification.close();
	const target = sameOriginUrl((event.notification.data as { url?: unknown } | null)?.url);
	event.waitUntil(
		(async () => {
			const windows = await sw.clients.matchAll({ type: 'window', includeUncontrolled: true });
			const open = windows.find((w) => w.url === target);
			if (open) {
				await open.focus();
				return;
			}
			await sw.clients.openWindow(target);
		})()
	);
});
