import { json } from '@sveltejs/kit';
import { readJson, problem } from '$lib/server/api';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { addCells, listBatch } from '$lib/server/cells';
import { cellBatchSchema } from '$lib/schemas/cells';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const batch = await listBatch(member, params.packId);
	return json({ cells: batch.cells });
};

/** A batch of arrival measurements: all are added, or none. */
export const POST: RequestHandler = async ({ locals, params, url, request }) => {
	const member = await requireMemberWith(locals, params, url, 'measurements.edit');
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
};
