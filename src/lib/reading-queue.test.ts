import { describe, expect, it } from 'vitest';
import {
	BATCH_SIZE,
	createReadingQueue,
	newClientId,
	outcomeOf,
	type QueuedReading,
	type QueueStore,
	type SendOutcome
} from './reading-queue';

/** A plain in-memory store with idb-keyval's get/update semantics. */
function memoryStore(): QueueStore & { data: Map<string, unknown> } {
	const data = new Map<string, unknown>();
	return {
		data,
		get: async (key) => data.get(key),
		update: async (key, fn) => {
			data.set(key, fn(data.get(key)));
		}
	};
}

/** A stand-in for the readings API that keeps what it stored by client id, as the server's unique key does. */
function fakeServer() {
	const stored = new Map<string, QueuedReading>();
	let online = true;
	const requests: QueuedReading[][] = [];
	return {
		stored,
		requests,
		setOnline: (v: boolean) => (online = v),
		send: async (batch: QueuedReading[]): Promise<SendOutcome> => {
			if (!online) throw new TypeError('Failed to fetch');
			requests.push(batch);
			const bad = batch.findIndex((r) => r.volts !== undefined && r.volts > 5);
			if (bad >= 0) return { kind: 'refused', message: 'One reading is out of range.', errors: [{ index: bad, message: 'Volts per cell above 5 V.' }] };
			for (const r of batch) if (!stored.has(r.clientId)) stored.set(r.clientId, r);
			return { kind: 'stored' };
		}
	};
}

const reading = (clientId: string, volts: number, groupIndex: number | null = 1): QueuedReading => ({
	clientId,
	groupIndex,
	takenAt: '2026-03-01T10:00:00.000Z',
	volts
});

describe('the reading queue', () => {
	it('keeps readings while offline and sends each once when back', async () => {
		const store = memoryStore();
		const server = fakeServer();
		const queue = createReadingQueue({ store, key: 'k', send: server.send });

		server.setOnline(false);
		await queue.enqueue([reading('a', 4.1), reading('b', 4.12, 2)]);
		const offline = await queue.flush();
		expect(offline.retry).toBe(true);
		expect(offline.saved).toEqual([]);
		expect((await queue.entries()).map((e) => e.reading.clientId)).toEqual(['a', 'b']);

		// The same round entered again (a double tap) does not queue twice.
		await queue.enqueue([reading('a', 4.1)]);
		expect(await queue.entries()).toHaveLength(2);

		server.setOnline(true);
		const back = await queue.flush();
		expect(back.saved.sort()).toEqual(['a', 'b']);
		expect(await queue.entries()).toEqual([]);
		expect([...server.stored.keys()].sort()).toEqual(['a', 'b']);
	});

	it('shares one run between flushes started together', async () => {
		const server = fakeServer();
		const queue = createReadingQueue({ store: memoryStore(), key: 'k', send: server.send });
		await queue.enqueue([reading('a', 4.1)]);
		const [one, two] = await Promise.all([queue.flush(), queue.flush()]);
		expect(one).toBe(two);
		expect(server.requests).toHaveLength(1);
	});

	it('a lost answer is retried and stored once', async () => {
		const store = memoryStore();
		const server = fakeServer();
		let dropAnswer = true;
		const queue = createReadingQueue({
			store,
			key: 'k',
			send: async (batch) => {
				const outcome = await server.send(batch);
				if (dropAnswer) {
					dropAnswer = false;
					throw new TypeError('network error after the server stored it');
				}
				return outcome;
			}
		});
		await queue.enqueue([reading('a', 4.1), reading('b', 4.0)]);
		expect((await queue.flush()).retry).toBe(true);
		expect((await queue.flush()).saved.sort()).toEqual(['a', 'b']);
		expect(server.requests).toHaveLength(2);
		expect(server.stored.size).toBe(2);
	});

	it('sets a refused reading aside and sends the rest', async () => {
		const server = fakeServer();
		const queue = createReadingQueue({ store: memoryStore(), key: 'k', send: server.send });
		await queue.enqueue([reading('a', 4.1), reading('typo', 41.2), reading('c', 4.05)]);
		const result = await queue.flush();
		expect(result.refused).toEqual(['typo']);
		expect(result.saved.sort()).toEqual(['a', 'c']);
		const left = await queue.entries();
		expect(left).toEqual([{ reading: reading('typo', 41.2), refused: 'Volts per cell above 5 V.' }]);
		// Not sent again until it is discarded.
		expect((await queue.flush()).saved).toEqual([]);
		await queue.discard(['typo']);
		expect(await queue.entries()).toEqual([]);
	});

	it('sends a long night in batches', async () => {
		const server = fakeServer();
		const queue = createReadingQueue({ store: memoryStore(), key: 'k', send: server.send });
		const many = Array.from({ length: BATCH_SIZE + 5 }, (_, i) => reading(`r${i}`, 4));
		await queue.enqueue(many);
		const result = await queue.flush();
		expect(result.saved).toHaveLength(BATCH_SIZE + 5);
		expect(server.requests.map((r) => r.length)).toEqual([BATCH_SIZE, 5]);
	});
});

describe('what an answer means', () => {
	const json = (status: number, body: unknown) =>
		new Response(JSON.stringify(body), { status, headers: { 'content-type': 'application/json' } });

	it('stored on 2xx, retry on 401 and 5xx, refused on 400 with the reading named', async () => {
		expect(await outcomeOf(json(201, { stored: 1, duplicates: 0, readings: [] }))).toEqual({ kind: 'stored' });
		expect((await outcomeOf(json(401, { message: 'Sign in' }))).kind).toBe('retry');
		expect((await outcomeOf(new Response('<html>Bad gateway</html>', { status: 502 }))).kind).toBe('retry');
		expect(await outcomeOf(json(400, { message: 'One reading is wrong.', errors: [{ index: 2, message: 'Too hot' }] }))).toEqual({
			kind: 'refused',
			message: 'One reading is wrong.',
			errors: [{ index: 2, message: 'Too hot' }]
		});
		// A zod path from the JSON helpers names the reading too.
		const byPath = await outcomeOf(json(400, { message: 'x', errors: [{ path: ['readings', 1, 'volts'], message: 'Volts' }] }));
		expect(byPath).toEqual({ kind: 'refused', message: 'x', errors: [{ index: 1, message: 'Volts' }] });
	});
});

describe('client ids', () => {
	it('are version-4 UUIDs, also without crypto.randomUUID (plain-HTTP origins)', () => {
		const uuid = /^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/;
		expect(newClientId()).toMatch(uuid);
		const original = crypto.randomUUID;
		try {
			Object.defineProperty(crypto, 'randomUUID', { value: undefined, configurable: true });
			const ids = new Set(Array.from({ length: 50 }, () => newClientId()));
			expect(ids.size).toBe(50);
			for (const id of ids) expect(id).toMatch(uuid);
		} finally {
			Object.defineProperty(crypto, 'randomUUID', { value: original, configurable: true });
		}
	});
});
