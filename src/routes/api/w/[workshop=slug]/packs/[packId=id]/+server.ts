import { json } from '@sveltejs/kit';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { getPackView, updatePack } from '$lib/server/packs';
import { packPatchSchema } from '$lib/schemas/packs';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'packs.viewOwn');
	const { params } = event;
	const view = await getPackView(member, params.packId);
	const { chemistry, ...spec } = view.spec;
	return json({ ...view, spec: { ...spec, chemistryName: chemistry.name } });
};

export const PATCH: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'packs.edit');
	const { request, params } = event;
	const input = await readJson(request, packPatchSchema);
	if (input instanceof Response) return input;
	const result = await updatePack(member, params.packId, input);
	if (!result.ok) {
		// A pack with charge sessions keeps its shape: a conflict with what is recorded, not bad input.
		const status = result.reason === 'keeps-shape' ? 409 : 400;
		return problem(status, { message: result.message, reason: result.reason, errors: [{ path: result.field, message: result.message }] });
	}
	return json({ pack: result.pack, clearedAssignment: result.clearedAssignment });
});
