/**
 * How every export writes CSV: UTF-8, a header row with units in the column names, "\r\n" line
 * ends (RFC 4180), times in ISO 8601 with the workshop's offset, and text that a spreadsheet could
 * run as a formula made inert (OWASP "CSV Injection"). Plain functions, no database.
 */
import { TZDate } from '@date-fns/tz';
import { format } from 'date-fns';
import Papa from 'papaparse';

/** A cell of an export: numbers stay numbers (never prefixed), text is checked, empty for none. */
export type CsvValue = string | number | boolean | Date | null | undefined;

/**
 * Text starting with = + - @ tab or CR may be read as a formula (OWASP lists these six); it gets a
 * leading apostrophe and quotes. Text that is wholly a plain number ("-3.2") is no formula and is
 * left alone, and numbers written by us are never text here.
 */
const formulaStart = /^(?![-+]?\d+(?:\.\d+)?(?:e[-+]?\d+)?$)[=+\-@\t\r]/i;

/** An instant as ISO 8601 with the zone's offset, e.g. 2026-11-05T21:00:00+01:00 (milliseconds only when there are some). */
export function isoInZone(date: Date, timeZone: string): string {
	const zoned = new TZDate(date.getTime(), timeZone);
	return format(zoned, date.getTime() % 1000 === 0 ? "yyyy-MM-dd'T'HH:mm:ssxxx" : "yyyy-MM-dd'T'HH:mm:ss.SSSxxx");
}

/** The CSV text of a header and rows. Dates are written in `timeZone`; text is made safe for spreadsheets. */
export function toCsv(header: readonly string[], rows: readonly (readonly CsvValue[])[], timeZone: string): string {
	const data = rows.map((row) =>
		row.map((value) => {
			if (value === null || value === undefined) return '';
			if (value instanceof Date) return isoInZone(value, timeZone);
			if (typeof value === 'number') return Number.isFinite(value) ? value : '';
			return value;
		})
	);
	return `${Papa.unparse({ fields: [...header], data }, { newline: '\r\n', escapeFormulae: formulaStart, quotes: false })}\r\n`;
}

/** A file name part from a person's text: letters, digits and dashes only, at most 40 characters. */
export function fileNamePart(text: string): string {
	const part = text
		.normalize('NFKD')
		.replace(/[\u0300-\u036f]/g, '')
		.replace(/[^A-Za-z0-9]+/g, '-')
		.replace(/^-+|-+$/g, '')
		.slice(0, 40)
		.replace(/-+$/, '');
	return part || 'unnamed';
}
