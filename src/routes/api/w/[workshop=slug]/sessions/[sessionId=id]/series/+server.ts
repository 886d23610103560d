import { problem, requireApiMember } from '$lib/server/api';
import { DEFAULT_POINTS, MAX_POINTS, sessionSeriesJson } from '$lib/server/sessions/series';
import type { RequestHandler } from './$types';

/**
 * Chart data of the session, at most `points` (default 600, at most 2000) points per line. The
 * answer is kept as text until the session's next change, so a refetch with nothing new costs the
 * session lookup only, whatever the session's size.
 */
export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'sessions.view');
	const raw = event.url.searchParams.get('points');
	let points = DEFAULT_POINTS;
	if (raw !== null) {
		points = Number(raw);
		if (!/^\d+$/.test(raw) || points < 10 || points > MAX_POINTS) {
			return problem(400, { message: `points must be a whole number from 10 to ${MAX_POINTS}.` });
		}
	}
	const json = await sessionSeriesJson(member, event.params.sessionId, points);
	return new Response(json, { headers: { 'content-type': 'application/json', 'cache-control': 'no-store' } });
};
