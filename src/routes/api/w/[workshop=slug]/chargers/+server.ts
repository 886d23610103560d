/** The workshop's chargers as JSON: GET lists them with their channels; POST records one. */
import { json } from '@sveltejs/kit';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { createCharger, listChargers } from '$lib/server/chargers';
import { chargerSchema } from '$lib/schemas/chargers';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'chargers.view');
	return json({ chargers: await listChargers(member) });
};

export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'chargers.edit');
	const input = await readJson(event.request, chargerSchema);
	if (input instanceof Response) return input;
	const result = await createCharger(member, input);
	if (!result.ok) return problem(409, { message: result.message, errors: [{ path: 'name', message: result.message }] });
	return json({ charger: result.charger }, { status: 201 });
});
