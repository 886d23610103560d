import { error, json } from '@sveltejs/kit';
import type { RequestHandler } from './$types';

// The floor for `npm run bench` (docs/performance.md): the same hooks and JSON body as the device
// readings endpoint, no database and no data. Only a server started with CELLSITTER_BENCH=1 has it.
export const POST: RequestHandler = async ({ request }) => {
	// Read at each request (process.env, as $lib/server/env does), so nothing caches an early value.
	if (process.env.CELLSITTER_BENCH !== '1') error(404, 'Not found');
	const body: unknown = await request.json().catch(() => null);
	return json({ stored: 0, received: body !== null }, { status: 201 });
};
