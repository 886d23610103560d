/**
 * Hands-on hours as people say them ("someone is here 07:00–23:00", "a night watch 22:00–06:00"),
 * in the workshop's own time zone, turned into the absolute windows the engine plans with
 * (`HandsOnWindow`). Client-safe: the plan form previews in the browser — whose own zone may be
 * another — and the server computes the saved plan with the same code.
 *
 * Daylight-saving changes: a window keeps its wall-clock times, so it is an hour shorter or longer
 * on the change day. A wall time that happens twice (clocks go back) or never (clocks go forward)
 * is read the cautious way: a window starts at the later of the possible instants and ends at the
 * earlier, so no plan counts on someone being there when they may not be.
 */
import { TZDate } from '@date-fns/tz';
import type { HandsOnWindow } from '$lib/engine';

/** One daily window, `HH:MM` 24-hour wall-clock times; `to` at or before `from` runs past midnight. */
export type DailyWindow = { from: string; to: string };


export type HandsOnResult =
	| { ok: true; windows: HandsOnWindow[] }
	| { ok: false; reason: 'bad-time' | 'empty-window' | 'bad-time-zone'; message: string };

const HOUR_MINUTE = /^([01]\d|2[0-3]):([0-5]\d)$/;
const MINUTE_MS = 60_000;
const DAY_MS = 24 * 60 * MINUTE_MS;

function minutesOf(text: string): number | null {
	const m = HOUR_MINUTE.exec(text);
	return m ? Number(m[1]) * 60 + Number(m[2]) : null;
}

function isTimeZone(timeZone: string): boolean {
	try {
		new Intl.DateTimeFormat('en', { timeZone });
		return true;
	} catch {
		return false;
	}
}

/** Offset of the zone from UTC at `ms`, in minutes east (Berlin in winter: +60). */
function offsetAt(ms: number, timeZone: string): number {
	return -new TZDate(ms, timeZone).getTimezoneOffset();
}

/** Wall-clock date and minute of day of `ms` in the zone. */
function wallOf(ms: number, timeZone: string) {
	const d = new TZDate(ms, timeZone);
	return { y: d.getFullYear(), m: d.getMonth(), d: d.getDate(), minute: d.getHours() * 60 + d.getMinutes() };
}

/**
 * The instant of a wall-clock time in the zone. `pick` chooses between the instants a wall time
 * can mean (two when clocks go back; when they go forward, none exists, and both offsets around
 * the change are tried): 'later' for a window's start, 'earlier' for its end.
 */
function instantOf(date: Date, minute: number, timeZone: string, pick: 'earlier' | 'later'): number {
	const [y, m, d] = [date.getUTCFullYear(), date.getUTCMonth(), date.getUTCDate()];
	const asUtc = Date.UTC(y, m, d, 0, minute);
	const offsets = new Set([-3, 0, 3].map((h) => offsetAt(asUtc + h * 60 * MINUTE_MS, timeZone)));
	const candidates = [...offsets].map((o) => asUtc - o * MINUTE_MS);
	const exact = candidates.filter((t) => {
		const w = wallOf(t, timeZone);
		return w.y === y && w.m === m && w.d === d && w.minute === minute;
	});
	const pool = exact.length ? exact : candidates;
	return pick === 'later' ? Math.max(...pool) : Math.min(...pool);
}

/**
 * The windows from the daily hands-on hours that overlap [from, from + days), clipped to it,
 * sorted. A window that began the evening before `from` and runs past midnight is included.
 */
export function handsOnWindows(daily: DailyWindow[], timeZone: string, from: Date, days: number): HandsOnResult {
	if (!isTimeZone(timeZone)) return { ok: false, reason: 'bad-time-zone', message: `“${timeZone}” is not a time zone.` };
	const parsed: { from: number; to: number }[] = [];
	for (const w of daily) {
		const a = minutesOf(w.from);
		const b = minutesOf(w.to);
		if (a === null || b === null) {
			return { ok: false, reason: 'bad-time', message: 'Write each time as hours and minutes, 00:00 to 23:59 (e.g. 07:00).' };
		}
		if (a === b) {
			return { ok: false, reason: 'empty-window', message: `A window from ${w.from} to ${w.to} has no length: give it an end time after its start.` };
		}
		parsed.push({ from: a, to: b });
	}
	const fromMs = from.getTime();
	const untilMs = fromMs + days * DAY_MS;
	const first = wallOf(fromMs, timeZone);
	const windows: HandsOnWindow[] = [];
	// From the day before (a night window may still be running) to a day past the end; calendar
	// days are counted with Date.UTC so that a 23- or 25-hour day is still one day.
	for (let i = -1; i <= days + 1; i++) {
		const day = new Date(Date.UTC(first.y, first.m, first.d + i));
		const nextDay = new Date(Date.UTC(first.y, first.m, first.d + i + 1));
		for (const w of parsed) {
			const start = instantOf(day, w.from, timeZone, 'later');
			const end = instantOf(w.to > w.from ? day : nextDay, w.to, timeZone, 'earlier');
			const a = Math.max(start, fromMs);
			const b = Math.min(end, untilMs);
			if (b > a) windows.push({ start: new Date(a), end: new Date(b) });
		}
	}
	windows.sort((p, q) => p.start.getTime() - q.start.getTime());
	return { ok: true, windows };
}
