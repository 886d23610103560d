import { json } from '@sveltejs/kit';
import { endpoint, readJson, requireApiMember } from '$lib/server/api';
import { finishStep, skipStep, startStep } from '$lib/server/sessions/core';
import { failureResponse } from '$lib/server/sessions/responses';
import { stepActionSchema } from '$lib/schemas/sessions';
import type { RequestHandler } from './$types';

/** `{ action: 'start' | 'done' | 'skip' }` on one step of a running session. */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'sessions.run');
	const input = await readJson(event.request, stepActionSchema);
	if (input instanceof Response) return input;
	const { sessionId, stepId } = event.params;
	const verb = input.action === 'start' ? startStep : input.action === 'done' ? finishStep : skipStep;
	const result = await verb(member, sessionId, stepId);
	if (!result.ok) return failureResponse(result);
	return json({ session: result.session, step: result.step });
});
