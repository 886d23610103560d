import { json } from '@sveltejs/kit';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { createSession } from '$lib/server/sessions/core';
import { listSessionsForPeople } from '$lib/server/sessions/list';
import { failureResponse } from '$lib/server/sessions/responses';
import { sessionPlanSchema } from '$lib/schemas/sessions';
import type { RequestHandler } from './$types';

const ID = /^[a-z2-7]{24}$/;

/** The sessions the member may see (`?packId=` for one pack's), running first. */
export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'sessions.view');
	const packId = event.url.searchParams.get('packId');
	if (packId !== null && !ID.test(packId)) return problem(400, { message: 'The pack id is not valid.' });
	return json({ sessions: await listSessionsForPeople(member, packId ? { packId } : {}) });
};

/** A new session: the server computes the plan from the form's values (step times sent are not read). */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'plans.edit');
	const input = await readJson(event.request, sessionPlanSchema);
	if (input instanceof Response) return input;
	const result = await createSession(member, input);
	if (!result.ok) return failureResponse(result);
	return json({ session: result.session, steps: result.steps, plan: result.plan }, { status: 201 });
});
