import { describe, expect, it } from 'vitest';
import { handsOnWindows, type DailyWindow } from './hands-on';

// Expected instants are worked by hand from the zones' published rules (IANA tz database):
// Europe/Berlin is UTC+1 (CET) in winter and UTC+2 (CEST) in summer; the EU changes at 01:00 UTC
// on the last Sunday of March (2026-03-29) and of October (2026-10-25). Asia/Kolkata is UTC+5:30
// all year; America/Los_Angeles is UTC−8 (PST) in winter. Every expectation is written out in UTC.
const utc = (iso: string) => new Date(iso);

function windows(daily: DailyWindow[], zone: string, from: string, days: number) {
	const r = handsOnWindows(daily, zone, utc(from), days);
	if (!r.ok) throw new Error(r.message);
	return r.windows.map((w) => [w.start.toISOString(), w.end.toISOString()]);
}

describe('hands-on hours in the workshop zone → absolute windows', () => {
	it('07:00–23:00 in Berlin in winter is 06:00–22:00 UTC each day', () => {
		expect(windows([{ from: '07:00', to: '23:00' }], 'Europe/Berlin', '2026-12-02T05:00:00Z', 2)).toEqual([
			['2026-12-02T06:00:00.000Z', '2026-12-02T22:00:00.000Z'],
			['2026-12-03T06:00:00.000Z', '2026-12-03T22:00:00.000Z']
		]);
	});

	it('clips to the span asked for: a start in the middle of a window, an end in the middle of one', () => {
		// From 10:00 CET (09:00 UTC) for one day: the rest of today's window, then tomorrow's up to 09:00 UTC.
		expect(windows([{ from: '07:00', to: '23:00' }], 'Europe/Berlin', '2026-12-02T09:00:00Z', 1)).toEqual([
			['2026-12-02T09:00:00.000Z', '2026-12-02T22:00:00.000Z'],
			['2026-12-03T06:00:00.000Z', '2026-12-03T09:00:00.000Z']
		]);
	});

	it('a night watch 22:00–06:00 runs across midnight, and one begun the evening before is kept', () => {
		// 22:00 CET = 21:00 UTC; 06:00 CET next day = 05:00 UTC. From 03:00 UTC on 2 Dec, the watch
		// that began on 1 Dec at 21:00 UTC is still on until 05:00 UTC.
		expect(windows([{ from: '22:00', to: '06:00' }], 'Europe/Berlin', '2026-12-02T03:00:00Z', 1)).toEqual([
			['2026-12-02T03:00:00.000Z', '2026-12-02T05:00:00.000Z'],
			['2026-12-02T21:00:00.000Z', '2026-12-03T03:00:00.000Z']
		]);
	});

	it('a day and a night watch together cover the whole day but for the gaps between them', () => {
		expect(
			windows(
				[
					{ from: '07:00', to: '22:00' },
					{ from: '22:30', to: '06:30' }
				],
				'Europe/Berlin',
				'2026-12-02T06:00:00Z',
				1
			)
		).toEqual([
			['2026-12-02T06:00:00.000Z', '2026-12-02T21:00:00.000Z'], // 07:00–22:00 CET
			['2026-12-02T21:30:00.000Z', '2026-12-03T05:30:00.000Z'] // 22:30–06:30 CET
		]);
	});

	it('on the spring change day the night watch is an hour shorter, and the day window moves by an hour in UTC', () => {
		// 28 Mar 22:00 CET = 21:00 UTC; 29 Mar 06:00 CEST = 04:00 UTC: 7 h, not 8.
		// 29 Mar 07:00 CEST = 05:00 UTC to 23:00 CEST = 21:00 UTC.
		expect(
			windows(
				[
					{ from: '07:00', to: '23:00' },
					{ from: '22:00', to: '06:00' }
				],
				'Europe/Berlin',
				'2026-03-28T20:00:00Z',
				1
			)
		).toEqual([
			['2026-03-28T20:00:00.000Z', '2026-03-28T22:00:00.000Z'], // 07:00–23:00 CET on the 28th, clipped
			['2026-03-28T21:00:00.000Z', '2026-03-29T04:00:00.000Z'],
			['2026-03-29T05:00:00.000Z', '2026-03-29T20:00:00.000Z'] // clipped at from + 24 h
		]);
	});

	it('on the autumn change day the night watch is an hour longer', () => {
		// 24 Oct 22:00 CEST = 20:00 UTC; 25 Oct 06:00 CET = 05:00 UTC: 9 h.
		expect(windows([{ from: '22:00', to: '06:00' }], 'Europe/Berlin', '2026-10-24T12:00:00Z', 1)).toEqual([
			['2026-10-24T20:00:00.000Z', '2026-10-25T05:00:00.000Z']
		]);
	});

	it('reads a wall time the clocks skip or repeat the cautious way: start later, end earlier', () => {
		// 02:30 does not exist in Berlin on 29 Mar (02:00 CET → 03:00 CEST). As a start it is read at
		// the winter offset (01:30 UTC), the later reading; as an end at the summer offset (00:30 UTC).
		expect(windows([{ from: '02:30', to: '05:00' }], 'Europe/Berlin', '2026-03-29T00:00:00Z', 0.5)[0]).toEqual([
			'2026-03-29T01:30:00.000Z',
			'2026-03-29T03:00:00.000Z' // 05:00 CEST
		]);
		expect(windows([{ from: '00:00', to: '02:30' }], 'Europe/Berlin', '2026-03-28T23:00:00Z', 0.5)[0]).toEqual([
			'2026-03-28T23:00:00.000Z', // 00:00 CET
			'2026-03-29T00:30:00.000Z'
		]);
		// 02:30 happens twice in Berlin on 25 Oct: 00:30 UTC (CEST) and 01:30 UTC (CET).
		expect(windows([{ from: '02:30', to: '05:00' }], 'Europe/Berlin', '2026-10-25T00:00:00Z', 0.5)[0]).toEqual([
			'2026-10-25T01:30:00.000Z',
			'2026-10-25T04:00:00.000Z' // 05:00 CET
		]);
		expect(windows([{ from: '00:00', to: '02:30' }], 'Europe/Berlin', '2026-10-24T22:00:00Z', 0.5)[0]).toEqual([
			'2026-10-24T22:00:00.000Z', // 00:00 CEST
			'2026-10-25T00:30:00.000Z'
		]);
	});

	it('depends on the workshop zone only, not on the zone of the machine that runs it', () => {
		// Kolkata, UTC+5:30: 07:00–23:00 is 01:30–17:30 UTC. Los Angeles in winter, UTC−8: 14:00 UTC to
		// 06:00 UTC next day.
		expect(windows([{ from: '07:00', to: '23:00' }], 'Asia/Kolkata', '2026-12-02T00:00:00Z', 1)).toEqual([
			['2026-12-02T01:30:00.000Z', '2026-12-02T17:30:00.000Z']
		]);
		expect(windows([{ from: '06:00', to: '22:00' }], 'America/Los_Angeles', '2026-12-02T14:00:00Z', 1)).toEqual([
			['2026-12-02T14:00:00.000Z', '2026-12-03T06:00:00.000Z']
		]);
	});

	it('refuses times it cannot read, a window without length and an unknown zone, in words', () => {
		const at = utc('2026-12-02T00:00:00Z');
		expect(handsOnWindows([{ from: '7:00', to: '23:00' }], 'Europe/Berlin', at, 1)).toMatchObject({ ok: false, reason: 'bad-time' });
		expect(handsOnWindows([{ from: '24:00', to: '06:00' }], 'Europe/Berlin', at, 1)).toMatchObject({ ok: false, reason: 'bad-time' });
		expect(handsOnWindows([{ from: '07:00', to: '07:00' }], 'Europe/Berlin', at, 1)).toMatchObject({
			ok: false,
			reason: 'empty-window',
			message: expect.stringContaining('07:00 to 07:00')
		});
		expect(handsOnWindows([], 'Mars/Olympus', at, 1)).toMatchObject({ ok: false, reason: 'bad-time-zone' });
	});
});
