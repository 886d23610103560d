/** TanStack Query options for a session's live data (keys start with the noun: ['sessions', id, …]). */
import type { SessionSeries } from '$lib/server/sessions/series';
import { requestJson } from './api';

export type { SeriesLine, SeriesPoint, SessionSeries, StepSeries } from '$lib/server/sessions/series';

const api = (workshop: string, sessionId: string) => `/api/w/${workshop}/sessions/${sessionId}`;

export const sessionKeys = {
	all: (sessionId: string) => ['sessions', sessionId] as const,
	series: (sessionId: string) => ['sessions', sessionId, 'series'] as const,
	readings: (sessionId: string) => ['sessions', sessionId, 'readings'] as const
};

/** Chart data, downsampled on the server to at most `points` points per line. */
export function sessionSeriesQuery(workshop: string, sessionId: string, points = 600) {
	return {
		queryKey: sessionKeys.series(sessionId),
		queryFn: () => requestJson<SessionSeries>(`${api(workshop, sessionId)}/series?points=${points}`)
	};
}

/** The URL of the session's server-sent events (reading, status, step, watch, plan, alert). */
export function sessionEventsUrl(workshop: string, sessionId: string): string {
	return `${api(workshop, sessionId)}/events`;
}

export type SessionEventKind = 'reading' | 'status' | 'step' | 'watch' | 'plan' | 'alert';
export const sessionEventKinds: SessionEventKind[] = ['reading', 'status', 'step', 'watch', 'plan', 'alert'];
