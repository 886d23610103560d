import { describe, expect, it } from 'vitest';
import { fileNamePart, isoInZone, toCsv } from './csv';

describe('isoInZone', () => {
	// Offsets from the IANA rules, worked by hand: Europe/Berlin is UTC+1 in winter, UTC+2 in summer
	// (2026: forward 29 March 01:00 UTC, back 25 October 01:00 UTC); America/New_York UTC−5 / −4.
	it.each([
		['2026-11-05T20:00:00.000Z', 'Europe/Berlin', '2026-11-05T21:00:00+01:00'],
		['2026-07-01T06:00:00.000Z', 'Europe/Berlin', '2026-07-01T08:00:00+02:00'],
		['2026-10-25T00:30:00.000Z', 'Europe/Berlin', '2026-10-25T02:30:00+02:00'],
		['2026-10-25T01:30:00.000Z', 'Europe/Berlin', '2026-10-25T02:30:00+01:00'],
		['2026-01-01T03:00:00.250Z', 'America/New_York', '2025-12-31T22:00:00.250-05:00'],
		['2026-06-01T12:00:00.000Z', 'UTC', '2026-06-01T12:00:00+00:00']
	])('%s in %s is %s', (instant, zone, expected) => {
		expect(isoInZone(new Date(instant), zone)).toBe(expected);
	});
});

describe('toCsv', () => {
	it('writes a header, CRLF lines, dates with offset, empty cells for none', () => {
		const text = toCsv(['taken_at', 'volts_V', 'note'], [[new Date('2026-11-05T20:00:00Z'), 3.912, null]], 'Europe/Berlin');
		expect(text).toBe('taken_at,volts_V,note\r\n2026-11-05T21:00:00+01:00,3.912,\r\n');
	});

	// OWASP "CSV Injection": cells starting with = + - @ tab or CR get a leading apostrophe (and quotes).
	it.each([
		['=HYPERLINK("http://x")', `"'=HYPERLINK(""http://x"")"`],
		['+1+2', `"'+1+2"`],
		['-2+3+cmd|\' /C calc\'!A0', `"'-2+3+cmd|' /C calc'!A0"`],
		['@SUM(A1)', `"'@SUM(A1)"`],
		['\tx', `"'\tx"`],
		['\r=1', `"'\r=1"`],
		['=1\n=2', `"'=1\n=2"`],
		['plain, with comma', '"plain, with comma"'],
		['a "quote"', '"a ""quote"""'],
		['-3.2', '-3.2'],
		['+4', '+4'],
		['1e-3', '1e-3'],
		['ok', 'ok']
	])('text %j is written %s', (value, written) => {
		expect(toCsv(['x'], [[value]], 'UTC')).toBe(`x\r\n${written}\r\n`);
	});

	it('keeps numbers numbers, negative ones too', () => {
		expect(toCsv(['amps_A', 'temp_C'], [[-3.2, -0.5]], 'UTC')).toBe('amps_A,temp_C\r\n-3.2,-0.5\r\n');
	});
});

describe('fileNamePart', () => {
	it.each([
		['Pack 13S4P "ebike"', 'Pack-13S4P-ebike'],
		['Überlänge/../x', 'Uberlange-x'],
		['…', 'unnamed']
	])('%s → %s', (text, part) => expect(fileNamePart(text)).toBe(part));
});
