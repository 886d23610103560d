import { json } from '@sveltejs/kit';
import { readJson, problem } from '$lib/server/api';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { getPackView, updatePack } from '$lib/server/packs';
import { packPatchSchema } from '$lib/schemas/packs';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const view = await getPackView(member, params.packId);
	const { chemistry, ...spec } = view.spec;
	return json({ ...view, spec: { ...spec, chemistryName: chemistry.name } });
};

export const PATCH: RequestHandler = async ({ locals, params, url, request }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.edit');
	const input = await readJson(request, packPatchSchema);
	if (input instanceof Response) return input;
	const result = await updatePack(member, params.packId, input);
	if (!result.ok) return problem(400, { message: result.message, errors: [{ path: result.field, message: result.message }] });
	return json({ pack: result.pack, clearedAssignment: result.clearedAssignment });
};
