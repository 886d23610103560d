import { json } from '@sveltejs/kit';
import { problem, requireApiMember } from '$lib/server/api';
import { DEFAULT_POINTS, MAX_POINTS, sessionSeries } from '$lib/server/sessions/series';
import type { RequestHandler } from './$types';

/** Chart data of the session, at most `points` (default 600, at most 2000) points per line. */
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
	const series = await sessionSeries(member, event.params.sessionId, points);
	return json(series, { headers: { 'cache-control': 'no-store' } });
};
