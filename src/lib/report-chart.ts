/**
 * The session report's chart and times, drawn as a static SVG (it must print: a canvas chart
 * animates and may not be painted when the print dialog takes the page). Client-safe, pure: the
 * zone is passed in; ticks fall on whole hours (or midnights) of the workshop's clock.
 */
import { TZDate } from '@date-fns/tz';

const HOUR = 3_600_000;

/** "Tue 3 Nov 2026, 18:30" in the zone. */
export function formatDateTime(at: Date | string, timeZone: string): string {
	return new Intl.DateTimeFormat('en-GB', {
		weekday: 'short',
		day: 'numeric',
		month: 'short',
		year: 'numeric',
		hour: '2-digit',
		minute: '2-digit',
		hourCycle: 'h23',
		timeZone
	}).format(new Date(at));
}

/** "3 Nov 18:30" in the zone: a table cell. */
export function formatShortDateTime(at: Date | string, timeZone: string): string {
	return new Intl.DateTimeFormat('en-GB', { day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZone }).format(
		new Date(at)
	);
}

/** Hours as a table shows them: "2.4 h". */
export function formatTableHours(hours: number | null): string {
	if (hours === null || !Number.isFinite(hours)) return '—';
	return `${hours.toFixed(1)}\u2009h`;
}

export type Tick = { value: number; label: string };

/** Steps of the volts axis (V): the smallest that gives at most `max` ticks. */
const VOLT_STEPS = [0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1];

/** Ticks of the volts axis over [lo, hi], on multiples of a round step. */
export function voltTicks(lo: number, hi: number, max = 7): Tick[] {
	const count = (s: number) => Math.floor(hi / s + 1e-9) - Math.ceil(lo / s - 1e-9) + 1;
	const step = VOLT_STEPS.find((s) => count(s) <= max) ?? 1;
	const digits = step < 0.01 ? 3 : step < 0.1 ? 2 : 1;
	const ticks: Tick[] = [];
	for (let v = Math.ceil(lo / step - 1e-9) * step; v <= hi + 1e-9; v += step) ticks.push({ value: v, label: v.toFixed(digits) });
	return ticks;
}

/** Hours between time ticks: the smallest that gives at most `max` ticks. */
const HOUR_STEPS = [1, 2, 3, 6, 12, 24, 48, 72, 168];

/**
 * Ticks of the time axis over [from, to] (epoch ms) at whole hours of the zone's clock that are
 * multiples of the step (or midnights for a step of a day or more); labelled "18:00", with the day
 * where it changes ("Wed 00:00"), or "Wed 4 Nov" for steps of a day or more.
 */
export function timeTicks(from: number, to: number, timeZone: string, max = 8): Tick[] {
	const spanHours = Math.max((to - from) / HOUR, 1e-6);
	const step = HOUR_STEPS.find((s) => spanHours / s <= max - 1) ?? HOUR_STEPS[HOUR_STEPS.length - 1];
	const dayLabel = new Intl.DateTimeFormat('en-GB', { weekday: 'short', day: 'numeric', month: 'short', timeZone });
	const clock = new Intl.DateTimeFormat('en-GB', { hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZone });
	const weekday = new Intl.DateTimeFormat('en-GB', { weekday: 'short', timeZone });
	const first = new TZDate(from, timeZone);
	first.setMinutes(0, 0, 0);
	const ticks: Tick[] = [];
	let lastDay = '';
	// Hour by hour on the zone's clock (a daylight-saving change skips or repeats one), keeping the matching ones.
	for (let t = first.getTime(); t <= to && ticks.length < 4 * max; t += HOUR) {
		if (t < from) continue;
		const local = new TZDate(t, timeZone);
		const onStep = step >= 24 ? local.getHours() === 0 && Math.round(local.getTime() / (24 * HOUR)) % (step / 24) === 0 : local.getHours() % step === 0;
		if (!onStep) continue;
		const day = dayLabel.format(t);
		const label = step >= 24 ? day : day !== lastDay && ticks.length > 0 ? `${weekday.format(t)} ${clock.format(t)}` : clock.format(t);
		lastDay = day;
		ticks.push({ value: t, label });
	}
	return ticks;
}

/** A line's points as an SVG polyline `points` attribute, scaled into the plot box. */
export function polylinePoints(
	points: [number, number][],
	scale: { x: (t: number) => number; y: (v: number) => number }
): string {
	return points.map(([t, v]) => `${scale.x(t).toFixed(1)},${scale.y(v).toFixed(1)}`).join(' ');
}
