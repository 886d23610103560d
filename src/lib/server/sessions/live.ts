/**
 * Live session events: one LISTEN on `cellsitter_session_events` per process (postgres.js keeps it
 * on a dedicated connection and listens again after a reconnect), fanned out to the subscribers of
 * each session. Every app instance listens, so a reading stored through one instance reaches the
 * browsers connected to any other. The events themselves are sent by `notifySession` (notify.ts)
 * inside the transaction of the change.
 */
import { sqlClient } from '../db';
import { SESSION_EVENTS_CHANNEL, type SessionEvent } from './notify';

type Listener = (event: SessionEvent) => void;

const subscribers = new Map<string, Set<Listener>>();
let listening: Promise<unknown> | undefined;

function parseEvent(payload: string): SessionEvent | null {
	try {
		const event = JSON.parse(payload) as SessionEvent;
		return typeof event?.sessionId === 'string' && typeof event.kind === 'string' ? event : null;
	} catch {
		return null;
	}
}

/** Listeners of every session's events (caches that drop a session's entry when it changes). */
const everyEvent = new Set<Listener>();

function deliver(payload: string) {
	const event = parseEvent(payload);
	if (!event) return;
	if (event.sessionId.startsWith('ping:')) return pings.get(event.sessionId)?.();
	for (const fn of [...everyEvent, ...(subscribers.get(event.sessionId) ?? [])]) {
		try {
			fn(event);
		} catch (e) {
			console.error('session event subscriber:', e);
		}
	}
}

type ListenHandle = { state: { pid: number }; unlisten: () => Promise<void> };
let handle: ListenHandle | undefined;

/** Starts the process's one LISTEN (once); a failure is forgotten so that the next subscriber retries. */
function ensureListening(): Promise<unknown> {
	listening ??= sqlClient()
		.listen(SESSION_EVENTS_CHANNEL, deliver)
		.then((h) => {
			handle = h as unknown as ListenHandle;
			startHealthCheck();
			return h;
		})
		.catch((e) => {
			listening = undefined;
			throw e;
		});
	return listening;
}

/** The server process holding this process's LISTEN (for tests that cut the connection). */
export function listenerBackendPid(): number | undefined {
	return handle?.state.pid;
}

/**
 * postgres.js listens again after its connection drops, but gives up silently if the database is
 * still unreachable at that moment. So every 30 s, while anyone is subscribed, the process sends
 * itself a ping on the channel; unheard within 10 s, it listens anew and tells every subscriber
 * to refetch (events may have been lost meanwhile).
 */
const PING_EVERY_MS = 30_000;
const PING_WAIT_MS = 10_000;
let healthTimer: ReturnType<typeof setInterval> | undefined;
const pings = new Map<string, () => void>();

function startHealthCheck() {
	if (healthTimer) return;
	healthTimer = setInterval(() => void checkListening(), PING_EVERY_MS);
	healthTimer.unref?.();
}

export async function checkListening(): Promise<boolean> {
	if (subscribers.size === 0 && everyEvent.size === 0) return true;
	const id = `ping:${crypto.randomUUID()}`;
	const heard = new Promise<boolean>((resolve) => {
		pings.set(id, () => resolve(true));
		setTimeout(() => resolve(false), PING_WAIT_MS).unref?.();
	});
	try {
		await sqlClient()`select pg_notify(${SESSION_EVENTS_CHANNEL}, ${JSON.stringify({ sessionId: id, kind: 'ping' })})`;
	} catch {
		pings.delete(id);
		return false; // the database is away: try again at the next tick
	}
	const ok = await heard;
	pings.delete(id);
	if (ok) return true;
	const old = handle;
	handle = undefined;
	listening = undefined;
	await old?.unlisten().catch(() => {});
	try {
		await ensureListening();
	} catch {
		return false;
	}
	const resync = (sessionId: string): SessionEvent => ({ sessionId, workshopId: '', kind: 'status' });
	for (const [sessionId, set] of subscribers) for (const fn of [...everyEvent, ...set]) fn(resync(sessionId));
	return false;
}

/**
 * Calls `fn` with every event of the session from now on; resolves once the LISTEN is in place
 * (so that nothing committed after it is missed) to the function that ends the subscription.
 */
export async function subscribe(sessionId: string, fn: Listener): Promise<() => void> {
	let set = subscribers.get(sessionId);
	if (!set) subscribers.set(sessionId, (set = new Set()));
	set.add(fn);
	const unsubscribe = () => {
		set.delete(fn);
		if (set.size === 0 && subscribers.get(sessionId) === set) subscribers.delete(sessionId);
	};
	try {
		await ensureListening();
	} catch (e) {
		unsubscribe();
		throw e;
	}
	return unsubscribe;
}

/**
 * Calls `fn` with every session's events while this process listens; resolves to true once the
 * LISTEN is in place, false when it cannot be (then nothing may be cached on the strength of it).
 */
export async function onEverySessionEvent(fn: Listener): Promise<boolean> {
	everyEvent.add(fn);
	try {
		await ensureListening();
		return true;
	} catch {
		return false;
	}
}

/** How many subscribers the session has in this process (for tests and diagnostics). */
export function subscriberCount(sessionId: string): number {
	return subscribers.get(sessionId)?.size ?? 0;
}

/** Seconds between comment lines that keep proxies and the browser from dropping a quiet stream. */
export const HEARTBEAT_SECONDS = 25;

/** Every open stream, so that a shutdown can end them instead of waiting out the server's timeout. */
const openStreams = new Set<() => void>();
let shutdownHooked = false;

function hookShutdown() {
	if (shutdownHooked) return;
	shutdownHooked = true;
	// adapter-node closes the server on these signals and waits for open requests: an event
	// stream never ends by itself, so end them all (browsers reconnect to another instance).
	const endAll = () => {
		for (const end of [...openStreams]) end();
	};
	// Only beside a handler that already exists (adapter-node's): a lone listener would stop the
	// signal's default exit.
	for (const signal of ['SIGTERM', 'SIGINT'] as const) {
		if (process.listenerCount(signal) > 0) process.once(signal, endAll);
	}
}

function frame(event: SessionEvent): string {
	const { sessionId, kind, count, newest } = event;
	return `event: ${kind}\ndata: ${JSON.stringify({ sessionId, kind, count, newest })}\n\n`;
}

/**
 * A `text/event-stream` response with the session's events (`reading`, `status`, `step`, `watch`,
 * `plan`, `alert`) as they are committed, a heartbeat comment every 25 s, ended when the client goes away.
 */
export async function sessionEventStream(sessionId: string, signal: AbortSignal): Promise<Response> {
	try {
		await ensureListening();
	} catch (e) {
		console.error('listening for session events:', e);
		return new Response(JSON.stringify({ message: 'Live updates are not available right now. Reload the page to try again.' }), {
			status: 503,
			headers: { 'content-type': 'application/json', 'retry-after': '10' }
		});
	}
	const encoder = new TextEncoder();
	let end = () => {};
	const stream = new ReadableStream<Uint8Array>({
		async start(controller) {
			let closed = false;
			let heartbeat: ReturnType<typeof setInterval> | undefined;
			let unsubscribe = () => {};
			const send = (text: string) => {
				if (closed) return;
				try {
					controller.enqueue(encoder.encode(text));
				} catch {
					end();
				}
			};
			end = () => {
				if (closed) return;
				closed = true;
				clearInterval(heartbeat);
				unsubscribe();
				openStreams.delete(end);
				signal.removeEventListener('abort', end);
				try {
					controller.close();
				} catch {
					// already closed by the client
				}
			};
			signal.addEventListener('abort', end);
			openStreams.add(end);
			hookShutdown();
			unsubscribe = await subscribe(sessionId, (event) => send(frame(event)));
			if (closed) unsubscribe();
			// Reconnect after 3 s if the stream drops; the first line tells the client it is live.
			send(`retry: 3000\n: listening\n\n`);
			heartbeat = setInterval(() => send(`: heartbeat\n\n`), HEARTBEAT_SECONDS * 1000);
		},
		cancel() {
			end();
		}
	});
	return new Response(stream, {
		headers: {
			'content-type': 'text/event-stream; charset=utf-8',
			'cache-control': 'no-store',
			'x-accel-buffering': 'no'
		}
	});
}
