import { json } from '@sveltejs/kit';
import { problem, requireApiMember } from '$lib/server/api';
import { DEFAULT_POINTS, MAX_POINTS, sessionSeries, type SeriesLine, type SeriesPoint, type SessionSeries } from '$lib/server/sessions/series';
import type { RequestHandler } from './$types';

/**
 * Values to the resolution a bench meter gives, so the answer carries no float noise: volts to
 * 0.1 mV, amps to 1 mA, °C to 0.01. A chart of a long session is most of its bytes.
 */
const round = (digits: number) => {
	const f = 10 ** digits;
	return (points: SeriesPoint[]): SeriesPoint[] => points.map(([t, v]) => [t, Math.round(v * f) / f]);
};
const volts = round(4);
const amps = round(3);
const degrees = round(2);
const lines = (list: SeriesLine[], r: (p: SeriesPoint[]) => SeriesPoint[]) => list.map((l) => ({ ...l, points: r(l.points) }));

function compact(series: SessionSeries): SessionSeries {
	return {
		...series,
		volts: lines(series.volts, volts),
		spread: volts(series.spread),
		temps: lines(series.temps, degrees),
		step: series.step && { ...series.step, predictedAmps: amps(series.step.predictedAmps), actualAmps: amps(series.step.actualAmps) }
	};
}

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
	return json(compact(series), { headers: { 'cache-control': 'no-store' } });
};
