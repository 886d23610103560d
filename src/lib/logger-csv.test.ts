import { describe, expect, it } from 'vitest';
import { guessLoggerMapping, loggerMappingSchema, loggerTime, parseLoggerCsv, readLoggerHeader } from './logger-csv';

// Instants worked by hand from the IANA rules: Europe/Berlin is UTC+1 in winter and UTC+2 in
// summer; in 2026 the clocks go forward at 02:00 local on 29 March (02:00–02:59 does not exist)
// and back at 03:00 local on 25 October (02:00–02:59 happens twice: first at +2, then at +1).
const zone = 'Europe/Berlin';
const now = Date.parse('2026-12-02T12:00:00Z');

describe('loggerTime', () => {
	it.each([
		['2026-12-02 14:30', '2026-12-02T13:30:00.000Z'],
		['2026-12-02 14:30:15', '2026-12-02T13:30:15.000Z'],
		['2026-07-01T08:00', '2026-07-01T06:00:00.000Z'],
		['2026-07-01T08:00:00+02:00', '2026-07-01T06:00:00.000Z'],
		['2026-07-01T06:00:00Z', '2026-07-01T06:00:00.000Z'],
		['2026-07-01T11:30:00+0530', '2026-07-01T06:00:00.000Z']
	])('%s → %s', (text, iso) => {
		expect(new Date(loggerTime(text, zone).ms).toISOString()).toBe(iso);
	});

	it('refuses a wall time the zone skips, and dates that do not exist', () => {
		expect(loggerTime('2026-03-29 02:30', zone).problem).toMatch(/does not exist/);
		expect(loggerTime('2026-02-30 10:00', zone).problem).toMatch(/not a real date/);
		expect(loggerTime('02.12.2026 14:30', zone).problem).toMatch(/not one Cellsitter reads/);
	});

	it('reads a repeated wall time as the later instant when the row before was already past the earlier', () => {
		// 02:30 the first time is 00:30Z; the second time, 01:30Z.
		expect(new Date(loggerTime('2026-10-25 02:30', zone).ms).toISOString()).toBe('2026-10-25T00:30:00.000Z');
		const after = Date.parse('2026-10-25T00:59:00Z');
		expect(new Date(loggerTime('2026-10-25 02:30', zone, after).ms).toISOString()).toBe('2026-10-25T01:30:00.000Z');
	});
});

const mapping = { time: 'Zeit', group: 'Gruppe', volts: 'Spannung', tempC: 'Temp', note: 'Notiz' };

describe('parseLoggerCsv', () => {
	it('reads semicolons and decimal commas, group or whole pack, with ids from the file’s time and group', () => {
		const csv = 'Zeit;Gruppe;Spannung;Temp;Notiz\r\n2026-12-01 22:00;3;3,912;24,5;\r\n2026-12-01 22:00;pack;15,62 V;;ganzes Pack\r\n\r\n2026-12-01 23:00;;15,70;;\r\n';
		const result = parseLoggerCsv(csv, mapping, { timeZone: zone, series: 4, now });
		expect(result.ok).toBe(true);
		expect(result.readings).toEqual([
			{ clientId: 'file:2026-12-01T21:00:00.000Z:3', groupIndex: 3, takenAt: '2026-12-01T21:00:00.000Z', volts: 3.912, tempC: 24.5 },
			{ clientId: 'file:2026-12-01T21:00:00.000Z:pack', groupIndex: null, takenAt: '2026-12-01T21:00:00.000Z', volts: 15.62, note: 'ganzes Pack' },
			{ clientId: 'file:2026-12-01T22:00:00.000Z:pack', groupIndex: null, takenAt: '2026-12-01T22:00:00.000Z', volts: 15.7 }
		]);
		// The same file read again gives the same ids (so a second upload adds nothing).
		expect(parseLoggerCsv(csv, mapping, { timeZone: zone, series: 4, now }).readings.map((r) => r.clientId)).toEqual(
			result.readings.map((r) => r.clientId)
		);
	});

	it('names every bad row with the row number a spreadsheet shows', () => {
		const csv = [
			'Zeit,Gruppe,Spannung,Temp,Notiz',
			'2026-12-01 22:00,1,3.90,,', // row 2 fine
			'2026-12-01 22:00,5,3.90,,', // row 3: group 5 of a 4S pack
			'yesterday,1,3.90,,', // row 4: time
			'2026-12-01 22:10,2,7.3,,', // row 5: 7.3 V per cell
			'2026-12-01 22:00,1,3.91,,', // row 6: same time and group as row 2
			'2026-12-01 22:20,2,abc,,', // row 7: not a number
			'2026-12-01 22:30,2,,,', // row 8: no value
			'2026-12-01 22:40,,30,,' // row 9: 30 V on a 4S pack
		].join('\n');
		const result = parseLoggerCsv(csv, mapping, { timeZone: zone, series: 4, now });
		expect(result.ok).toBe(false);
		if (result.ok) return;
		expect(result.errors.map((e) => e.row)).toEqual([3, 4, 5, 6, 7, 8, 9]);
		expect(result.errors[0].message).toMatch(/^row 3: group "5"/);
		expect(result.errors[3].message).toMatch(/same time and group as row 2/);
		expect(result.readings).toHaveLength(1);
	});

	it('refuses a map whose column is missing from the file, an empty file, and a file with too many rows', () => {
		const missing = parseLoggerCsv('Time,V\n2026-12-01 22:00,3.9\n', mapping, { timeZone: zone, series: 4, now });
		expect(!missing.ok && missing.errors[0]).toMatchObject({ row: 0, message: expect.stringContaining('no column "Zeit"') });
		expect(parseLoggerCsv('', mapping, { timeZone: zone, series: 4, now }).ok).toBe(false);
		const rows = Array.from({ length: 100_001 }, (_, i) => `2026-11-01T00:00:00Z,1,3.9,,${i}`);
		const big = parseLoggerCsv(['Zeit,Gruppe,Spannung,Temp,Notiz', ...rows].join('\n'), mapping, { timeZone: zone, series: 4, now });
		expect(!big.ok && big.errors[0].message).toMatch(/100,001 readings; one upload takes at most 100,000/);
	});
});

describe('the column map', () => {
	it('guesses from common header names and is checked before it is saved', () => {
		const { headers, delimiter } = readLoggerHeader('Timestamp;Group;Voltage (V);Current (A);Cell temp °C;Ambient °C\n');
		expect(delimiter).toBe(';');
		expect(guessLoggerMapping(headers)).toEqual({
			time: 'Timestamp',
			group: 'Group',
			volts: 'Voltage (V)',
			amps: 'Current (A)',
			tempC: 'Cell temp °C',
			ambientC: 'Ambient °C'
		});
		expect(loggerMappingSchema.safeParse({ time: '', volts: 'V' }).success).toBe(false);
		expect(loggerMappingSchema.safeParse({ time: 'T', volts: 'T' }).success).toBe(false);
		expect(loggerMappingSchema.parse({ time: 'T', volts: 'V', amps: '' })).toEqual({ time: 'T', volts: 'V' });
	});
});
