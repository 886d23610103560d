import { describe, expect, it } from 'vitest';
import { inQuietTime, routeAlert, type RoutePerson } from './alert-routing';

// Wall times worked by hand from the zones' published rules (IANA tz database), every instant
// written in UTC:
// - Europe/London: GMT (UTC+0) in winter, BST (UTC+1) in summer; in 2026 the clocks go forward at
//   01:00 UTC on 29 March (01:00 GMT → 02:00 BST) and back at 01:00 UTC on 25 October (02:00 BST →
//   01:00 GMT).
// - America/New_York: EST (UTC−5) in winter, EDT (UTC−4) in summer; in 2026 forward at 07:00 UTC on
//   8 March (02:00 EST → 03:00 EDT) and back at 06:00 UTC on 1 November.
const LONDON = 'Europe/London';
const NEW_YORK = 'America/New_York';
const utc = (iso: string) => new Date(iso);

describe('inQuietTime: 22:00–07:00 in London', () => {
	it.each([
		// Winter: wall time = UTC.
		['2026-12-02T21:59:00Z', '21:59 GMT', false],
		['2026-12-02T22:00:00Z', '22:00 GMT, the start counts', true],
		['2026-12-03T03:00:00Z', '03:00 GMT', true],
		['2026-12-03T06:59:00Z', '06:59 GMT', true],
		['2026-12-03T07:00:00Z', '07:00 GMT, the end does not', false],
		// Summer: wall time = UTC + 1.
		['2026-07-01T20:59:00Z', '21:59 BST', false],
		['2026-07-01T21:00:00Z', '22:00 BST', true],
		['2026-07-02T05:59:00Z', '06:59 BST', true],
		['2026-07-02T06:00:00Z', '07:00 BST', false],
		// Spring change night (28→29 March): 7 hours of quiet instead of 9.
		['2026-03-28T21:59:00Z', '21:59 GMT on the 28th', false],
		['2026-03-28T22:00:00Z', '22:00 GMT on the 28th', true],
		['2026-03-29T00:59:00Z', '00:59 GMT, just before the change', true],
		['2026-03-29T01:00:00Z', '02:00 BST, just after it', true],
		['2026-03-29T05:59:00Z', '06:59 BST', true],
		['2026-03-29T06:00:00Z', '07:00 BST: over, though it is only 06:00 UTC', false],
		// Autumn change night (24→25 October): 01:30 happens twice, quiet both times; ends at 07:00 GMT.
		['2026-10-24T06:30:00Z', '07:30 BST on the 24th', false],
		['2026-10-25T00:30:00Z', '01:30 BST', true],
		['2026-10-25T01:30:00Z', '01:30 GMT, the second time', true],
		['2026-10-25T06:30:00Z', '06:30 GMT: still quiet, the same UTC time as the 24th', true],
		['2026-10-25T07:00:00Z', '07:00 GMT', false]
	])('%s (%s) → %s', (iso, _, quiet) => {
		expect(inQuietTime(utc(iso), LONDON, '22:00', '07:00')).toBe(quiet);
	});

	it('the zone matters: 21:30 UTC in July is 22:30 in London (quiet) but 21:30 in UTC (not)', () => {
		expect(inQuietTime(utc('2026-07-01T21:30:00Z'), LONDON, '22:00', '07:00')).toBe(true);
		expect(inQuietTime(utc('2026-07-01T21:30:00Z'), 'UTC', '22:00', '07:00')).toBe(false);
	});
});

describe('inQuietTime: New York', () => {
	it.each([
		// 23:00–06:30 across the spring change (7 → 8 March).
		['2026-03-08T03:59:00Z', '22:59 EST on the 7th', false],
		['2026-03-08T04:00:00Z', '23:00 EST on the 7th', true],
		['2026-03-08T06:59:00Z', '01:59 EST', true],
		['2026-03-08T07:00:00Z', '03:00 EDT (02:00–02:59 never happens)', true],
		['2026-03-08T10:29:00Z', '06:29 EDT', true],
		['2026-03-08T10:30:00Z', '06:30 EDT', false],
		// The day before, the end is an hour later in UTC.
		['2026-03-07T11:29:00Z', '06:29 EST on the 7th', true],
		['2026-03-07T11:30:00Z', '06:30 EST on the 7th', false]
	])('23:00–06:30: %s (%s) → %s', (iso, _, quiet) => {
		expect(inQuietTime(utc(iso), NEW_YORK, '23:00', '06:30')).toBe(quiet);
	});

	it.each([
		['2026-12-02T16:59:00Z', '11:59 EST', false],
		['2026-12-02T17:00:00Z', '12:00 EST', true],
		['2026-12-02T18:29:00Z', '13:29 EST', true],
		['2026-12-02T18:30:00Z', '13:30 EST', false],
		['2026-07-01T16:00:00Z', '12:00 EDT', true],
		['2026-07-01T17:30:00Z', '13:30 EDT', false]
	])('a quiet time within one day, 12:00–13:30: %s (%s) → %s', (iso, _, quiet) => {
		expect(inQuietTime(utc(iso), NEW_YORK, '12:00', '13:30')).toBe(quiet);
	});
});

describe('inQuietTime: no quiet time', () => {
	const night = utc('2026-12-03T03:00:00Z');
	it.each([
		['from equals to', '22:00', '22:00', LONDON],
		['no from', null, '07:00', LONDON],
		['no to', '22:00', null, LONDON],
		['not HH:MM', '7:00', '22:00', LONDON],
		['24:00 is not a time', '22:00', '24:00', LONDON],
		['a zone that does not exist', '22:00', '07:00', 'Mars/Base']
	])('%s → never quiet', (_, from, to, zone) => {
		expect(inQuietTime(night, zone, from, to)).toBe(false);
	});

	it('an invalid date → not quiet', () => {
		expect(inQuietTime(new Date('nonsense'), LONDON, '22:00', '07:00')).toBe(false);
	});
});

describe('routeAlert', () => {
	const everyone: RoutePerson = { emailAlerts: true, pushAlerts: true, hasPushDevice: true, quietFrom: '22:00', quietTo: '07:00', onWatch: false };
	const night = utc('2026-12-02T23:00:00Z'); // 23:00 GMT: in the quiet time
	const day = utc('2026-12-02T12:00:00Z'); // 12:00 GMT
	const info = { severity: 'info' as const, kind: 'step-finished' };
	const warning = { severity: 'warning' as const, kind: 'reading-overdue' };
	const critical = { severity: 'critical' as const, kind: 'over-voltage' };

	it.each([
		['info by day: every chosen channel', info, everyone, 'watcher', day, [['email', 'pending'], ['push', 'pending']]],
		['info at night to a watcher: held', info, everyone, 'watcher', night, [['email', 'held'], ['push', 'held']]],
		['info at night to the technician on watch (reason): not held', info, everyone, 'on-watch', night, [['email', 'pending'], ['push', 'pending']]],
		['info at night to a watcher who is on watch: not held', info, { ...everyone, onWatch: true }, 'watcher', night, [['email', 'pending'], ['push', 'pending']]],
		['a warning at night: never held', warning, everyone, 'watcher', night, [['email', 'pending'], ['push', 'pending']]],
		['a critical at night: never held', critical, everyone, 'watcher', night, [['email', 'pending'], ['push', 'pending']]],
		['push chosen with no device: gone', warning, { ...everyone, hasPushDevice: false }, 'watcher', day, [['email', 'pending'], ['push', 'gone']]],
		['held and gone together', info, { ...everyone, hasPushDevice: false }, 'watcher', night, [['email', 'held'], ['push', 'gone']]],
		['e-mail only', critical, { ...everyone, pushAlerts: false }, 'watcher', day, [['email', 'pending']]],
		['push only', critical, { ...everyone, emailAlerts: false }, 'on-watch', day, [['push', 'pending']]],
		['no channel chosen: nothing (the screen still shows it)', critical, { ...everyone, emailAlerts: false, pushAlerts: false }, 'watcher', day, []],
		['escalation: every chosen channel, at night too', critical, everyone, 'escalation', night, [['email', 'pending'], ['push', 'pending']]],
		['escalation to an owner who chose nothing: e-mail anyway', critical, { ...everyone, emailAlerts: false, pushAlerts: false }, 'escalation', night, [['email', 'pending']]],
		['escalation to an owner with push only and no device: e-mail anyway', critical, { ...everyone, emailAlerts: false, hasPushDevice: false }, 'escalation', day, [['email', 'pending'], ['push', 'gone']]],
		['escalation to an owner with push only and a device: push', critical, { ...everyone, emailAlerts: false }, 'escalation', day, [['push', 'pending']]],
		['no e-mail fallback for anything but a critical escalation', warning, { ...everyone, emailAlerts: false, pushAlerts: false }, 'escalation', day, []]
	] as const)('%s', (_, alert, person, reason, now, expected) => {
		const routes = routeAlert(alert, person, reason, now, LONDON);
		expect(routes.map((r) => [r.channel, r.status])).toEqual(expected);
	});

	it('quiet time is read in the workshop zone, on a change day too', () => {
		// 29 March 06:30 UTC is 07:30 BST in London (quiet over) but 06:30 in UTC (still quiet).
		const at = utc('2026-03-29T06:30:00Z');
		expect(routeAlert(info, everyone, 'watcher', at, LONDON).map((r) => r.status)).toEqual(['pending', 'pending']);
		expect(routeAlert(info, everyone, 'watcher', at, 'UTC').map((r) => r.status)).toEqual(['held', 'held']);
	});
});
