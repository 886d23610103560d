import { json } from '@sveltejs/kit';
import { watcherChangeSchema } from '$lib/schemas/alert-settings';
import { listWatchers, setWatcher } from '$lib/server/alerts/recipients';
import { endpoint, readJson, requireApiMember } from '$lib/server/api';
import { failureResponse } from '$lib/server/sessions/responses';
import type { RequestHandler } from './$types';

/** Who is told of the session's alerts, and why. */
export const GET: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'sessions.view');
	const result = await listWatchers(member, event.params.sessionId);
	if (!result.ok) return failureResponse(result);
	return json({ watchers: result.watchers });
});

/** Adds a member (`{ userId, watching: true }`) or takes one off (`watching: false`); answers the new list. */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'plans.edit');
	const input = await readJson(event.request, watcherChangeSchema);
	if (input instanceof Response) return input;
	const result = await setWatcher(member, event.params.sessionId, input.userId, input.watching);
	if (!result.ok) return failureResponse(result);
	return json({ watchers: result.watchers });
});
