/**
 * chart.js's date adapter for the session charts: calendar steps from date-fns in the workshop's
 * zone (@date-fns/tz), tick labels from the browser's Intl.DateTimeFormat.
 *
 * It replaces chartjs-adapter-date-fns, which does the same calendar steps but also brings date-fns's
 * `parse` and `format` (every token parser and the English locale, about 14 kB gzip of the run
 * screen's 157 kB, docs/performance.md). Our charts only ever hand chart.js epoch milliseconds and
 * ask for the few labels in CHART_FORMATS, so neither is needed.
 */
import { tz } from '@date-fns/tz';
import {
	addDays,
	addHours,
	addMilliseconds,
	addMinutes,
	addMonths,
	addQuarters,
	addSeconds,
	addWeeks,
	addYears,
	differenceInDays,
	differenceInHours,
	differenceInMilliseconds,
	differenceInMinutes,
	differenceInMonths,
	differenceInQuarters,
	differenceInSeconds,
	differenceInWeeks,
	differenceInYears,
	endOfDay,
	endOfHour,
	endOfMinute,
	endOfMonth,
	endOfQuarter,
	endOfSecond,
	endOfWeek,
	endOfYear,
	startOfDay,
	startOfHour,
	startOfMinute,
	startOfMonth,
	startOfQuarter,
	startOfSecond,
	startOfWeek,
	startOfYear
} from 'date-fns';

export type TimeUnit = 'millisecond' | 'second' | 'minute' | 'hour' | 'day' | 'week' | 'month' | 'quarter' | 'year';

/** The labels the charts use: chart.js asks for them by these names (time.displayFormats, tooltipFormat). */
const LABELS: Record<string, Intl.DateTimeFormatOptions> = {
	time: { hour: '2-digit', minute: '2-digit', hourCycle: 'h23' },
	seconds: { hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' },
	day: { day: 'numeric', month: 'short' },
	'day-time': { day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' },
	month: { month: 'short', year: 'numeric' },
	year: { year: 'numeric' }
};
export type ChartLabel = keyof typeof LABELS;

/** Which label each time unit's ticks get, and 'datetime' for tooltips. */
export const CHART_FORMATS: Record<TimeUnit | 'datetime', ChartLabel> = {
	datetime: 'day-time',
	millisecond: 'seconds',
	second: 'seconds',
	minute: 'time',
	hour: 'time',
	day: 'day',
	week: 'day',
	month: 'month',
	quarter: 'month',
	year: 'year'
};

type Ms = number;
type Calendar = { in: ReturnType<typeof tz> };

const adders: Record<TimeUnit, (t: Ms, n: number, o: Calendar) => Date> = {
	millisecond: (t, n, o) => addMilliseconds(t, n, o),
	second: (t, n, o) => addSeconds(t, n, o),
	minute: (t, n, o) => addMinutes(t, n, o),
	hour: (t, n, o) => addHours(t, n, o),
	day: (t, n, o) => addDays(t, n, o),
	week: (t, n, o) => addWeeks(t, n, o),
	month: (t, n, o) => addMonths(t, n, o),
	quarter: (t, n, o) => addQuarters(t, n, o),
	year: (t, n, o) => addYears(t, n, o)
};
const differences: Record<TimeUnit, (a: Ms, b: Ms, o: Calendar) => number> = {
	millisecond: (a, b) => differenceInMilliseconds(a, b),
	second: (a, b) => differenceInSeconds(a, b),
	minute: (a, b) => differenceInMinutes(a, b),
	hour: (a, b) => differenceInHours(a, b),
	day: (a, b, o) => differenceInDays(a, b, o),
	week: (a, b, o) => differenceInWeeks(a, b, o),
	month: (a, b, o) => differenceInMonths(a, b, o),
	quarter: (a, b, o) => differenceInQuarters(a, b, o),
	year: (a, b, o) => differenceInYears(a, b, o)
};
const starts: Record<TimeUnit, (t: Ms, o: Calendar & { weekStartsOn?: 0 | 1 | 2 | 3 | 4 | 5 | 6 }) => Date> = {
	millisecond: (t) => new Date(t),
	second: (t, o) => startOfSecond(t, o),
	minute: (t, o) => startOfMinute(t, o),
	hour: (t, o) => startOfHour(t, o),
	day: (t, o) => startOfDay(t, o),
	week: (t, o) => startOfWeek(t, o),
	month: (t, o) => startOfMonth(t, o),
	quarter: (t, o) => startOfQuarter(t, o),
	year: (t, o) => startOfYear(t, o)
};
const ends: Record<TimeUnit, (t: Ms, o: Calendar) => Date> = {
	millisecond: (t) => new Date(t),
	second: (t, o) => endOfSecond(t, o),
	minute: (t, o) => endOfMinute(t, o),
	hour: (t, o) => endOfHour(t, o),
	day: (t, o) => endOfDay(t, o),
	week: (t, o) => endOfWeek(t, o),
	month: (t, o) => endOfMonth(t, o),
	quarter: (t, o) => endOfQuarter(t, o),
	year: (t, o) => endOfYear(t, o)
};

/**
 * The adapter's methods for one time zone (pass it as `scales.x.adapters.date: { timeZone }`;
 * chart.js calls these with `this.options` set to that object). Unknown units leave the time as is.
 */
export function zonedDateAdapter() {
	const formatters = new Map<string, Intl.DateTimeFormat>();
	const calendarOf = (options: { timeZone?: string }): Calendar => ({ in: tz(options.timeZone ?? 'UTC') });
	return {
		formats: () => CHART_FORMATS,
		parse(value: unknown): number | null {
			const t = value instanceof Date ? value.getTime() : typeof value === 'number' ? value : NaN;
			return Number.isFinite(t) ? t : null;
		},
		format(this: { options: { timeZone?: string } }, time: Ms, label: string): string {
			const timeZone = this.options.timeZone ?? 'UTC';
			const key = `${timeZone}|${label}`;
			let f = formatters.get(key);
			if (!f) {
				f = new Intl.DateTimeFormat('en-GB', { ...(LABELS[label] ?? LABELS['day-time']), timeZone });
				formatters.set(key, f);
			}
			return f.format(time);
		},
		add(this: { options: { timeZone?: string } }, time: Ms, amount: number, unit: TimeUnit): Ms {
			return adders[unit] ? adders[unit](time, amount, calendarOf(this.options)).getTime() : time;
		},
		diff(this: { options: { timeZone?: string } }, a: Ms, b: Ms, unit: TimeUnit): number {
			return differences[unit] ? differences[unit](a, b, calendarOf(this.options)) : 0;
		},
		startOf(this: { options: { timeZone?: string } }, time: Ms, unit: TimeUnit | 'isoWeek', weekday?: number): Ms {
			const o = calendarOf(this.options);
			if (unit === 'isoWeek') {
				const day = Math.trunc(weekday ?? 1);
				return startOfWeek(time, { ...o, weekStartsOn: (((day % 7) + 7) % 7) as 0 | 1 | 2 | 3 | 4 | 5 | 6 }).getTime();
			}
			return starts[unit] ? starts[unit](time, o).getTime() : time;
		},
		endOf(this: { options: { timeZone?: string } }, time: Ms, unit: TimeUnit): Ms {
			return ends[unit] ? ends[unit](time, calendarOf(this.options)).getTime() : time;
		}
	};
}
