import { describe, expect, it } from 'vitest';
import { formatTableHours, timeTicks, voltTicks } from './report-chart';

// Hand-worked expectations (calendar facts: 6 January 2026 is a Tuesday; India has no daylight
// saving and is UTC+05:30; Berlin is UTC+01:00 in January).
describe('the report chart’s axes', () => {
	it('puts volts ticks on round steps inside the range', () => {
		// 0.69 V span: 0.1 V steps give 7 ticks at most.
		expect(voltTicks(3.58, 4.27).map((t) => t.label)).toEqual(['3.6', '3.7', '3.8', '3.9', '4.0', '4.1', '4.2']);
		// 0.05 V span: 0.01 V steps.
		expect(voltTicks(4.151, 4.199).map((t) => t.label)).toEqual(['4.16', '4.17', '4.18', '4.19']);
	});

	it('puts time ticks on whole hours of the workshop’s clock, not of UTC', () => {
		const from = Date.parse('2026-01-05T00:00:00Z'); // 05:30 in Kolkata
		const to = Date.parse('2026-01-05T06:00:00Z'); // 11:30
		const ticks = timeTicks(from, to, 'Asia/Kolkata');
		expect(ticks.map((t) => t.label)).toEqual(['06:00', '07:00', '08:00', '09:00', '10:00', '11:00']);
		expect(new Date(ticks[0].value).toISOString()).toBe('2026-01-05T00:30:00.000Z');
	});

	it('names the day where the ticks cross midnight', () => {
		const from = Date.parse('2026-01-05T20:00:00Z'); // Mon 21:00 in Berlin
		const to = Date.parse('2026-01-06T02:00:00Z'); // Tue 03:00
		expect(timeTicks(from, to, 'Europe/Berlin').map((t) => t.label)).toEqual(['21:00', '22:00', '23:00', 'Tue 00:00', '01:00', '02:00', '03:00']);
	});

	it('shows hours to a tenth, and a dash for none', () => {
		expect(formatTableHours(2.56)).toBe('2.6\u2009h');
		expect(formatTableHours(null)).toBe('—');
	});
});
