import { json } from '@sveltejs/kit';
import { readJson, problem } from '$lib/server/api';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { createPack, listPacks } from '$lib/server/packs';
import { packSchema } from '$lib/schemas/packs';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	return json({ packs: await listPacks(member) });
};

export const POST: RequestHandler = async ({ locals, params, url, request }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.edit');
	const input = await readJson(request, packSchema);
	if (input instanceof Response) return input;
	const result = await createPack(member, input);
	if (!result.ok) return problem(400, { message: result.message, errors: [{ path: result.field, message: result.message }] });
	return json({ pack: result.pack }, { status: 201 });
};
