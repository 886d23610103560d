import { error } from '@sveltejs/kit';
import { requireApiMember } from '$lib/server/api';
import { sessionEventStream } from '$lib/server/sessions/live';
import { sessionForMember } from '$lib/server/sessions/readings';
import type { RequestHandler } from './$types';

/** The session's events as server-sent events (docs/api.md): reading, status, step, watch, plan. */
export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'sessions.view');
	const session = await sessionForMember(member, event.params.sessionId);
	if (!session) error(404, 'Not found');
	return sessionEventStream(session.id, event.request.signal);
};
