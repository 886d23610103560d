import { json } from '@sveltejs/kit';
import { endpoint, readJson, requireApiMember } from '$lib/server/api';
import { finishSession, pauseSession, resumeSession, startSession, stopSession } from '$lib/server/sessions/core';
import { failureResponse } from '$lib/server/sessions/responses';
import { statusActionSchema } from '$lib/schemas/sessions';
import type { RequestHandler } from './$types';

/**
 * `{ action: 'start' | 'pause' | 'resume' | 'stop' | 'finish', reason? }`. Owners and builders
 * start; anyone who may run sessions pauses, resumes, stops (with a reason) and finishes.
 */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'sessions.run');
	const input = await readJson(event.request, statusActionSchema);
	if (input instanceof Response) return input;
	const id = event.params.sessionId;
	const result =
		input.action === 'start'
			? await startSession(member, id)
			: input.action === 'pause'
				? await pauseSession(member, id)
				: input.action === 'resume'
					? await resumeSession(member, id)
					: input.action === 'stop'
						? await stopSession(member, id, input.reason ?? '')
						: await finishSession(member, id);
	if (!result.ok) return failureResponse(result);
	return json({ session: result.session });
});
