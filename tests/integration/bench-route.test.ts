// The bare route `npm run bench` measures beside the readings endpoint: there only when the server
// was started with CELLSITTER_BENCH=1, and it hands out nothing.
import { afterEach, describe, expect, it } from 'vitest';
import { POST } from '../../src/routes/api/bench/bare/+server';
import { apiEvent } from './helpers';

type Event = Parameters<typeof POST>[0];
const before = process.env.CELLSITTER_BENCH;

afterEach(() => {
	if (before === undefined) delete process.env.CELLSITTER_BENCH;
	else process.env.CELLSITTER_BENCH = before;
});

describe('POST /api/bench/bare', () => {
	it('is not found unless CELLSITTER_BENCH=1', async () => {
		for (const value of [undefined, '', '0', 'true']) {
			if (value === undefined) delete process.env.CELLSITTER_BENCH;
			else process.env.CELLSITTER_BENCH = value;
			await expect(POST(apiEvent<Event>(null, '/api/bench/bare', {}, { method: 'POST', body: { readings: [] } }))).rejects.toMatchObject({ status: 404 });
		}
	});

	it('with CELLSITTER_BENCH=1 reads the body and answers without data', async () => {
		process.env.CELLSITTER_BENCH = '1';
		const response = await POST(apiEvent<Event>(null, '/api/bench/bare', {}, { method: 'POST', body: { readings: [{ clientId: 'a' }] } }));
		expect(response.status).toBe(201);
		expect(await response.json()).toEqual({ stored: 0, received: true });
	});
});
