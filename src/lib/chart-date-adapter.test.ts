/**
 * Our chart date adapter against the package it replaces: chartjs-adapter-date-fns 3 (kept as a
 * dev dependency for this check). That package steps the calendar in the process's own zone (it
 * passes no zone to add/startOf/endOf), so each zone is compared with the process's TZ set to it
 * (Node re-reads TZ when it changes): ours, told the zone, must agree with it exactly; the labels are checked against date-fns's own `format` with the
 * equivalent tokens, and across a daylight-saving change in London (29 March and 25 October 2026,
 * from the tz database: clocks go forward at 01:00 UTC and back at 01:00 UTC).
 */
import { tz } from '@date-fns/tz';
import { _adapters } from 'chart.js';
import 'chartjs-adapter-date-fns';
import { format } from 'date-fns';
import { describe, expect, it, onTestFinished } from 'vitest';
import { CHART_FORMATS, zonedDateAdapter, type TimeUnit } from './chart-date-adapter';

const UNITS: TimeUnit[] = ['millisecond', 'second', 'minute', 'hour', 'day', 'week', 'month', 'quarter', 'year'];
const ZONES = ['Europe/London', 'America/New_York', 'Asia/Kolkata', 'UTC'];
/** Around both of London's 2026 changes, a New York change (8 March 2026, 07:00 UTC) and an ordinary day. */
const TIMES = [
	'2026-03-29T00:30:00Z',
	'2026-03-29T01:30:00Z',
	'2026-10-25T00:45:00Z',
	'2026-10-25T01:15:00Z',
	'2026-03-08T06:59:59.500Z',
	'2026-03-08T07:00:00Z',
	'2026-12-02T15:42:17.250Z',
	'2026-12-31T23:59:59.999Z'
].map((s) => Date.parse(s));

function ours(timeZone: string) {
	const a = zonedDateAdapter();
	const self = { options: { timeZone } };
	return {
		add: (t: number, n: number, u: TimeUnit) => a.add.call(self, t, n, u),
		diff: (x: number, y: number, u: TimeUnit) => a.diff.call(self, x, y, u),
		startOf: (t: number, u: TimeUnit) => a.startOf.call(self, t, u),
		endOf: (t: number, u: TimeUnit) => a.endOf.call(self, t, u),
		format: (t: number, label: string) => a.format.call(self, t, label),
		startOfIsoWeek: (t: number, weekday: number) => a.startOf.call(self, t, 'isoWeek', weekday)
	};
}

function reference() {
	// The package's adapter, constructed as chart.js does, with date-fns options. It answers Dates
	// where ours answers epoch ms (chart.js reads both with a unary plus), so it is compared as +x.
	const Adapter = _adapters._date as unknown as new (options: object) => {
		add(t: number, n: number, u: TimeUnit): number;
		diff(a: number, b: number, u: TimeUnit): number;
		startOf(t: number, u: TimeUnit | 'isoWeek', weekday?: number): number;
		endOf(t: number, u: TimeUnit): number;
	};
	return new Adapter({});
}

describe('zoned chart date adapter', () => {
	it('steps the calendar exactly as chartjs-adapter-date-fns does in the local zone, for four zones and across DST changes', () => {
		let compared = 0;
		const before = process.env.TZ;
		onTestFinished(() => {
			if (before === undefined) delete process.env.TZ;
			else process.env.TZ = before;
		});
		for (const zone of ZONES) {
			process.env.TZ = zone;
			expect(new Date(Date.parse('2026-07-01T12:00:00Z')).getTimezoneOffset()).toBe(
				{ 'Europe/London': -60, 'America/New_York': 240, 'Asia/Kolkata': -330, UTC: 0 }[zone]
			);
			const mine = ours(zone);
			const theirs = reference();
			for (const t of TIMES) {
				for (const unit of UNITS) {
					for (const n of [-3, 1, 7]) {
						expect(mine.add(t, n, unit), `${zone} add ${n} ${unit} to ${new Date(t).toISOString()}`).toBe(+theirs.add(t, n, unit));
					}
					expect(mine.startOf(t, unit), `${zone} startOf ${unit}`).toBe(+theirs.startOf(t, unit));
					expect(mine.endOf(t, unit), `${zone} endOf ${unit}`).toBe(+theirs.endOf(t, unit));
					for (const u of TIMES) expect(mine.diff(t, u, unit), `${zone} diff ${unit}`).toBe(+theirs.diff(t, u, unit));
					compared += 6 + TIMES.length;
				}
				expect(mine.startOfIsoWeek(t, 1)).toBe(+theirs.startOf(t, 'isoWeek', 1));
			}
		}
		expect(compared).toBe(ZONES.length * TIMES.length * UNITS.length * (6 + TIMES.length));
	});

	it('labels ticks in the zone as date-fns format does with the equivalent tokens', () => {
		const tokens: Record<string, string> = { time: 'HH:mm', seconds: 'HH:mm:ss', day: 'd MMM', 'day-time': 'd MMM, HH:mm', month: 'MMM yyyy', year: 'yyyy' };
		for (const zone of ZONES) {
			const mine = ours(zone);
			for (const t of TIMES) {
				for (const [label, token] of Object.entries(tokens)) {
					// Intl's en-GB short month is "Sept" for September; none of these times is in it.
					expect(mine.format(t, label), `${zone} ${label}`).toBe(format(t, token, { in: tz(zone) }));
				}
			}
		}
	});

	it('writes hand-worked wall times: 01:30 UTC on 29 March 2026 is 02:30 in London (BST began at 01:00 UTC)', () => {
		const london = ours('Europe/London');
		expect(london.format(Date.parse('2026-03-29T00:30:00Z'), 'time')).toBe('00:30');
		expect(london.format(Date.parse('2026-03-29T01:30:00Z'), 'time')).toBe('02:30');
		// 25 October: 00:45 UTC is 01:45 BST, 01:15 UTC is 01:15 GMT.
		expect(london.format(Date.parse('2026-10-25T00:45:00Z'), 'time')).toBe('01:45');
		expect(london.format(Date.parse('2026-10-25T01:15:00Z'), 'time')).toBe('01:15');
		// The start of that day in London is midnight BST, 23:00 UTC the day before.
		expect(new Date(london.startOf(Date.parse('2026-10-25T12:00:00Z'), 'day')).toISOString()).toBe('2026-10-24T23:00:00.000Z');
		// Every unit has a label, and parse takes the numbers and dates our charts pass.
		for (const unit of [...UNITS, 'datetime' as const]) expect(CHART_FORMATS[unit]).toBeTruthy();
		const a = zonedDateAdapter();
		expect(a.parse(5)).toBe(5);
		expect(a.parse(new Date(7))).toBe(7);
		expect(a.parse('2026-01-01')).toBeNull();
	});
});
