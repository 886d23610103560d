/**
 * The run screen's offline queue: a reading goes into the queue (IndexedDB in the browser, through
 * idb-keyval) the moment it is entered, with a client id made then; a sender posts what is queued
 * to the readings API whenever it can. The server stores a client id once, so a retry after a lost
 * answer is harmless. A reading counts as saved only when the server has answered for it.
 *
 * The logic here is pure over an injected store and sender so that it can be tested without a
 * browser; `browserQueueStore` is the IndexedDB store.
 */

export type QueuedReading = {
	clientId: string;
	groupIndex: number | null;
	takenAt: string;
	volts?: number;
	amps?: number;
	tempC?: number;
	ambientC?: number;
	note?: string;
};

export type QueueEntry = {
	reading: QueuedReading;
	/** Set when the server refused this reading (bad input): it is not sent again until discarded. */
	refused?: string;
};

/** The key-value store the queue keeps its list in; `update` must be atomic (idb-keyval's is). */
export interface QueueStore {
	get(key: string): Promise<unknown>;
	update(key: string, fn: (old: unknown) => unknown): Promise<void>;
}

/**
 * What a send came to: `stored` (the server has every reading sent, new or repeated), `refused`
 * (bad input: by index of the batch, or the whole batch when no index is given), or `retry`
 * (no connection, signed out, server trouble — keep them and try again later).
 */
export type SendOutcome =
	| { kind: 'stored' }
	| { kind: 'refused'; message: string; errors: { index: number; message: string }[] }
	| { kind: 'retry'; message: string };

export type Sender = (readings: QueuedReading[]) => Promise<SendOutcome>;

/** At most this many readings per request (a long offline night stays well under the API's batch limit). */
export const BATCH_SIZE = 200;

export type FlushResult = { saved: string[]; refused: string[]; retry: boolean; message?: string };

function entriesOf(value: unknown): QueueEntry[] {
	return Array.isArray(value) ? (value as QueueEntry[]) : [];
}

export function queueKey(sessionId: string): string {
	return `cellsitter:readings:${sessionId}`;
}

export function createReadingQueue(opts: { store: QueueStore; key: string; send: Sender }) {
	const { store, key, send } = opts;
	let flushing: Promise<FlushResult> | null = null;

	async function entries(): Promise<QueueEntry[]> {
		return entriesOf(await store.get(key));
	}

	/** Adds readings to the queue (a repeated client id is kept once). */
	async function enqueue(readings: QueuedReading[]): Promise<void> {
		await store.update(key, (old) => {
			const list = entriesOf(old);
			const known = new Set(list.map((e) => e.reading.clientId));
			return [...list, ...readings.filter((r) => !known.has(r.clientId)).map((reading) => ({ reading }))];
		});
	}

	async function remove(clientIds: Set<string>): Promise<void> {
		await store.update(key, (old) => entriesOf(old).filter((e) => !clientIds.has(e.reading.clientId)));
	}

	async function markRefused(messages: Map<string, string>): Promise<void> {
		await store.update(key, (old) =>
			entriesOf(old).map((e) =>
				messages.has(e.reading.clientId) ? { ...e, refused: messages.get(e.reading.clientId) } : e
			)
		);
	}

	async function flushOnce(): Promise<FlushResult> {
		const result: FlushResult = { saved: [], refused: [], retry: false };
		// Each pass sends one batch; a refused reading is set aside and the rest go again.
		for (;;) {
			const waiting = (await entries()).filter((e) => !e.refused).map((e) => e.reading);
			if (waiting.length === 0) return result;
			const batch = waiting.slice(0, BATCH_SIZE);
			let outcome: SendOutcome;
			try {
				outcome = await send(batch);
			} catch {
				// No answer at all (no connection, server down): nothing to add to "waiting".
				outcome = { kind: 'retry', message: '' };
			}
			if (outcome.kind === 'retry') return { ...result, retry: true, message: outcome.message };
			if (outcome.kind === 'stored') {
				const ids = batch.map((r) => r.clientId);
				await remove(new Set(ids));
				result.saved.push(...ids);
				continue;
			}
			const named = outcome.errors.filter((e) => Number.isInteger(e.index) && batch[e.index]);
			const messages = new Map<string, string>();
			// Without an index the server refused the batch as a whole: set all of it aside.
			if (named.length === 0) for (const r of batch) messages.set(r.clientId, outcome.message);
			for (const e of named) messages.set(batch[e.index].clientId, e.message);
			await markRefused(messages);
			result.refused.push(...messages.keys());
			result.message = outcome.message;
		}
	}

	return {
		entries,
		enqueue,
		/** Sends everything waiting; concurrent calls share one run. */
		flush(): Promise<FlushResult> {
			flushing ??= flushOnce().finally(() => {
				flushing = null;
			});
			return flushing;
		},
		/** Drops readings the server refused (the technician enters them again, corrected). */
		discard: (clientIds: string[]) => remove(new Set(clientIds))
	};
}

export type ReadingQueue = ReturnType<typeof createReadingQueue>;

/**
 * The outcome of a POST to the readings API: 2xx stored; 400/403/404/409/413/415/422 refused
 * (sending again would not help); anything else (401 signed out, 5xx, 429) is retried.
 */
export async function outcomeOf(response: Response): Promise<SendOutcome> {
	if (response.ok) return { kind: 'stored' };
	let body: { message?: unknown; errors?: unknown } = {};
	try {
		body = await response.json();
	} catch {
		// A proxy's HTML error page: the status decides.
	}
	const message = typeof body.message === 'string' ? body.message : `The server answered ${response.status}.`;
	if ([400, 403, 404, 409, 413, 415, 422].includes(response.status)) {
		const errors = (Array.isArray(body.errors) ? body.errors : []).flatMap((e) => {
			const index = readingIndex(e);
			return index === null ? [] : [{ index, message: typeof e?.message === 'string' ? e.message : message }];
		});
		return { kind: 'refused', message, errors };
	}
	if (response.status === 401) return { kind: 'retry', message: 'You are signed out. Sign in again and they will be sent.' };
	return { kind: 'retry', message };
}

/** Which reading of the batch an API error is about: `{ index }` or a zod path `['readings', 3, 'volts']`. */
function readingIndex(e: { index?: unknown; path?: unknown } | null | undefined): number | null {
	if (typeof e?.index === 'number') return e.index;
	if (Array.isArray(e?.path) && e.path[0] === 'readings' && typeof e.path[1] === 'number') return e.path[1];
	return null;
}

/** A sender that posts to `url` with the page's cookie. */
export function httpSender(url: string, fetcher: typeof fetch = fetch): Sender {
	return async (readings) => {
		const response = await fetcher(url, {
			method: 'POST',
			headers: { 'content-type': 'application/json', accept: 'application/json' },
			body: JSON.stringify({ readings }),
			credentials: 'same-origin'
		});
		return outcomeOf(response);
	};
}

/**
 * A client id made when the reading is entered. crypto.randomUUID exists only on a secure origin;
 * a phone on plain HTTP gets a version-4 UUID from getRandomValues, which every browser has.
 */
export function newClientId(): string {
	if (typeof crypto.randomUUID === 'function') return crypto.randomUUID();
	const b = crypto.getRandomValues(new Uint8Array(16));
	b[6] = (b[6] & 0x0f) | 0x40;
	b[8] = (b[8] & 0x3f) | 0x80;
	const hex = [...b].map((x) => x.toString(16).padStart(2, '0')).join('');
	return `${hex.slice(0, 8)}-${hex.slice(8, 12)}-${hex.slice(12, 16)}-${hex.slice(16, 20)}-${hex.slice(20)}`;
}

/** idb-keyval in the browser (loaded on demand: it touches indexedDB when imported). */
export async function browserQueueStore(): Promise<QueueStore> {
	const { get, update } = await import('idb-keyval');
	return {
		get: (key) => get(key),
		update: (key, fn) => update(key, fn)
	};
}
