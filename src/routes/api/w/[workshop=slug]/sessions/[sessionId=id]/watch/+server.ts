import { json } from '@sveltejs/kit';
import { endpoint, readJson, requireApiMember } from '$lib/server/api';
import { handOverWatch } from '$lib/server/sessions/core';
import { failureResponse } from '$lib/server/sessions/responses';
import { handoverSchema } from '$lib/schemas/sessions';
import type { RequestHandler } from './$types';

/** Hands the watch to another member who may run sessions: `{ userId }`. Recorded in the audit trail. */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'sessions.run');
	const input = await readJson(event.request, handoverSchema);
	if (input instanceof Response) return input;
	const result = await handOverWatch(member, event.params.sessionId, input.userId);
	if (!result.ok) return failureResponse(result);
	return json({ session: result.session });
});
