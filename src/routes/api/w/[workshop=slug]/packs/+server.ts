import { json } from '@sveltejs/kit';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { createPack, listPacks } from '$lib/server/packs';
import { packSchema } from '$lib/schemas/packs';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'packs.viewOwn');
	return json({ packs: await listPacks(member) });
};

export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'packs.edit');
	const input = await readJson(event.request, packSchema);
	if (input instanceof Response) return input;
	const result = await createPack(member, input);
	if (!result.ok) return problem(400, { message: result.message, errors: [{ path: result.field, message: result.message }] });
	return json({ pack: result.pack }, { status: 201 });
});
