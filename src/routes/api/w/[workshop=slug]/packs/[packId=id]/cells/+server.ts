import { json } from '@sveltejs/kit';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { addCells, listBatch } from '$lib/server/cells';
import { cellBatchSchema } from '$lib/schemas/cells';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'packs.viewOwn');
	const { params } = event;
	const batch = await listBatch(member, params.packId);
	return json({ cells: batch.cells });
};

/** A batch of arrival measurements: all are added, or none. */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'measurements.edit');
	const { request, params } = event;
	const input = await readJson(request, cellBatchSchema);
	if (input instanceof Response) return input;
	const result = await addCells(member, params.packId, input.cells);
	if (!result.ok) {
		return problem(409, {
			message: result.message,
			errors: result.errors.map((e) => ({ path: `cells.${e.row - 1}.label`, message: e.message }))
		});
	}
	return json({ imported: result.imported }, { status: 201 });
});
