import { json } from '@sveltejs/kit';
import { endpoint, readJson, requireApiMember } from '$lib/server/api';
import { getSession, updateSession } from '$lib/server/sessions/core';
import { failureResponse } from '$lib/server/sessions/responses';
import { sessionPatchSchema } from '$lib/schemas/sessions';
import type { RequestHandler } from './$types';

/** One session with its pack, groups, steps, watch and what the member may do. */
export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'sessions.view');
	return json(await getSession(member, event.params.sessionId));
};

/** Changes a draft or planned session: only the keys sent; the plan is computed again. */
export const PATCH: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'plans.edit');
	const patch = await readJson(event.request, sessionPatchSchema);
	if (patch instanceof Response) return patch;
	const result = await updateSession(member, event.params.sessionId, patch);
	if (!result.ok) return failureResponse(result);
	return json({ session: result.session, steps: result.steps, plan: result.plan });
});
