/**
 * Who gets an alert on which channel, and whether it goes now or waits for the end of the person's
 * quiet time. Client-safe (the alert settings page can preview it); the server calls it when it
 * writes a delivery row per person and channel.
 *
 * Quiet time is wall-clock 'HH:MM' in the workshop's zone, read at the moment of the alert, so on a
 * daylight-saving change day a quiet time of 22:00–07:00 still ends at 07:00 on the clock (the
 * night is an hour shorter or longer in real time).
 */
import { TZDate } from '@date-fns/tz';
import type { AlertSeverity } from '$lib/engine';

export type AlertChannel = 'email' | 'push';
/** Why the person gets it: they watch the session, they are the technician on watch, or it escalated to them. */
export type RouteReason = 'watcher' | 'on-watch' | 'escalation';
/** pending: send now; held: quiet time, send when it ends; gone: push chosen but no device to push to. */
export type RouteStatus = 'pending' | 'held' | 'gone';
export type Route = { channel: AlertChannel; status: RouteStatus };

export type RoutePerson = {
	emailAlerts: boolean;
	pushAlerts: boolean;
	/** At least one push subscription (a device that said yes to notifications). */
	hasPushDevice: boolean;
	quietFrom: string | null;
	quietTo: string | null;
	/** The technician on watch of the alert's session. */
	onWatch: boolean;
};

const HOUR_MINUTE = /^([01]\d|2[0-3]):([0-5]\d)$/;

function minuteOfDay(text: string | null): number | null {
	const m = typeof text === 'string' ? HOUR_MINUTE.exec(text) : null;
	return m ? Number(m[1]) * 60 + Number(m[2]) : null;
}

/** The wall-clock minute of the day of `now` in the zone, or null for a bad date or zone. */
function wallMinute(now: Date, timeZone: string): number | null {
	if (!(now instanceof Date) || !Number.isFinite(now.getTime())) return null;
	try {
		new Intl.DateTimeFormat('en', { timeZone });
	} catch {
		return null;
	}
	const d = new TZDate(now.getTime(), timeZone);
	return d.getHours() * 60 + d.getMinutes();
}

/**
 * True when `now` falls in the daily quiet time [from, to) on the wall clock of `timeZone`.
 * `to` at or before `from` runs past midnight (22:00–07:00). No quiet time — and so false — when
 * either end is missing or not 'HH:MM', when from equals to, or when the zone or date is bad
 * (sending is the safe side).
 */
export function inQuietTime(now: Date, timeZone: string, from: string | null, to: string | null): boolean {
	const a = minuteOfDay(from);
	const b = minuteOfDay(to);
	if (a === null || b === null || a === b) return false;
	const m = wallMinute(now, timeZone);
	if (m === null) return false;
	return a < b ? m >= a && m < b : m >= a || m < b;
}

/**
 * The deliveries for one person, e-mail first:
 * - the channels the person chose; push without a device is kept as 'gone', so the delivery log
 *   says why nothing reached a phone;
 * - quiet time holds back ('held') information alerts only, and never for the technician on watch
 *   (reason 'on-watch', or `onWatch`); warnings and critical alerts always go out;
 * - an escalation goes out on every channel the owner chose, never held; a critical escalation that
 *   would reach nobody (no channel chosen, or push only with no device) goes by e-mail anyway —
 *   every account has an address, and an owner must hear of an unanswered critical alert.
 * A person who chose no channel gets no delivery otherwise (they still see the alert on screen).
 */
export function routeAlert(
	alert: { severity: AlertSeverity; kind: string },
	person: RoutePerson,
	reason: RouteReason,
	now: Date,
	timeZone: string
): Route[] {
	const chosen: AlertChannel[] = [];
	if (person.emailAlerts) chosen.push('email');
	if (person.pushAlerts) chosen.push('push');
	const hold =
		reason === 'watcher' && alert.severity === 'info' && !person.onWatch && inQuietTime(now, timeZone, person.quietFrom, person.quietTo);
	const routes: Route[] = chosen.map((channel) => ({
		channel,
		status: channel === 'push' && !person.hasPushDevice ? 'gone' : hold ? 'held' : 'pending'
	}));
	if (reason === 'escalation' && alert.severity === 'critical' && !routes.some((r) => r.status === 'pending')) {
		routes.unshift({ channel: 'email', status: 'pending' });
	}
	return routes;
}
