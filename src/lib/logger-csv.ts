/**
 * A data logger's CSV → readings. The browser's preview and the server's import read a file
 * through this same code: papaparse splits the records (commas, semicolons or tabs; decimal point
 * or decimal comma, as in the cell import), the workshop's column map says which column is which,
 * and every row is checked with the readings schema. Each row's clientId comes from the file's own
 * time and group, so the same file uploaded twice adds nothing. Client-safe.
 */
import { TZDate } from '@date-fns/tz';
import Papa from 'papaparse';
import { z } from 'zod';
import { parseDecimal } from './cells-csv-columns';
import { parseIsoWithOffset, READING_LIMITS, readingInputSchema, type ReadingInput } from './schemas/readings';
import { hasControlCharacter } from './schemas/text';

export const loggerFields = ['time', 'group', 'volts', 'amps', 'tempC', 'ambientC', 'note'] as const;
export type LoggerField = (typeof loggerFields)[number];
/** Our field → the file's column header. Time is required; the rest as the logger writes them. */
export type LoggerMapping = Partial<Record<LoggerField, string>>;

export const loggerFieldWords: Record<LoggerField, string> = {
	time: 'Time',
	group: 'Group (empty or "pack" for the whole pack)',
	volts: 'Volts (per cell for a group, the pack’s for the whole pack)',
	amps: 'Amps',
	tempC: 'Cell temperature (°C)',
	ambientC: 'Room temperature (°C)',
	note: 'Note'
};

const headerName = z
	.string()
	.max(100, 'A column name has at most 100 characters.')
	.refine((v) => !hasControlCharacter(v), 'A column name holds no control characters.')
	.transform((v) => v.trim())
	.optional();

/** The workshop's saved map, as the form and the database hold it (an empty choice is left out). */
export const loggerMappingSchema = z
	.object({
		time: headerName,
		group: headerName,
		volts: headerName,
		amps: headerName,
		tempC: headerName,
		ambientC: headerName,
		note: headerName
	})
	.transform((m) => Object.fromEntries(Object.entries(m).filter(([, v]) => v)) as LoggerMapping)
	.refine((m) => Boolean(m.time), 'Choose the column that holds the time.')
	.refine((m) => Boolean(m.volts || m.amps || m.tempC || m.ambientC), 'Choose at least one column of values: volts, amps or a temperature.')
	.refine((m) => {
		const used = Object.values(m);
		return new Set(used).size === used.length;
	}, 'Use each column of the file for one field only.');

/** Largest file accepted (bytes of text) and most rows. */
export const LOGGER_CSV_MAX_BYTES = 5 * 1024 * 1024;
export const LOGGER_CSV_MAX_ROWS = 100_000;
const ERRORS_LISTED = 100;

/** A problem: `row` as a spreadsheet numbers it (the header is row 1); 0 for the whole file. */
export type LoggerRowError = { row: number; message: string };

export type LoggerCsvResult =
	| { ok: true; readings: ReadingInput[] }
	| { ok: false; errors: LoggerRowError[]; readings: ReadingInput[] };

/** Text without byte-order marks, "\n" line ends, and the separator its header uses most (tab, then ";", then ","). */
function splitSettings(text: string): { body: string; delimiter: string } {
	let body = text.replace(/\uFEFF/g, '').replace(/\r\n?/g, '\n');
	const hint = /^"?sep=(.)[^\n]*\n/i.exec(body);
	if (hint) return { body: body.slice(hint[0].length), delimiter: hint[1] };
	body = body.replace(/^\n+/, '');
	const header = body.slice(0, (body.indexOf('\n') + 1 || body.length + 1) - 1);
	const counts = ['\t', ';', ','].map((d) => [d, header.split(d).length - 1] as const);
	const best = counts.reduce((a, b) => (b[1] > a[1] ? b : a));
	return { body, delimiter: best[1] > 0 ? best[0] : ',' };
}

function records(text: string): { rows: string[][]; delimiter: string } {
	const { body, delimiter } = splitSettings(text);
	const parsed = Papa.parse<string[]>(body, { delimiter, newline: '\n', quoteChar: '"', header: false, skipEmptyLines: false });
	return { rows: parsed.data, delimiter };
}

/** The header row's column names (for the column map). */
export function readLoggerHeader(text: string): { delimiter: string; headers: string[] } {
	const { body, delimiter } = splitSettings(text);
	const first = Papa.parse<string[]>(body, { delimiter, newline: '\n', preview: 1 }).data[0] ?? [];
	return { delimiter, headers: first.map((h) => h.trim()).filter((h) => h !== '') };
}

const guesses: [LoggerField, RegExp][] = [
	['time', /^(time|timestamp|date.?time|datetime|zeit|when|taken.?at|date)/i],
	['group', /^(group|grp|cell.?group|channel|ch|group.?index)\b/i],
	['ambientC', /(ambient|room|air)/i],
	['tempC', /(temp|°c|deg)/i],
	// Not followed by a letter or digit, so that volts_V and amps_A (our own exports) match too.
	['volts', /^(volts?|voltage|u|v)(?![a-z0-9])/i],
	['amps', /^(amps?|current|i|a)(?![a-z0-9])/i],
	['note', /^(note|comment|remark)/i]
];

/** A first guess of the map from the header names; the person confirms or changes it. */
export function guessLoggerMapping(headers: string[]): LoggerMapping {
	const mapping: LoggerMapping = {};
	const taken = new Set<string>();
	for (const [field, pattern] of guesses) {
		const hit = headers.find((h) => !taken.has(h) && pattern.test(h.trim()));
		if (hit) {
			mapping[field] = hit;
			taken.add(hit);
		}
	}
	return mapping;
}

const localTime = /^(\d{4})-(\d{2})-(\d{2})[ T](\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,3})\d*)?)?$/;

/**
 * The instant of a logger's time: ISO 8601 with an offset as written, or `YYYY-MM-DD HH:MM[:SS]`
 * read in the workshop's zone. A wall time that the zone skips (clocks going forward) is refused;
 * one it repeats (clocks going back) is read as the later instant when the earlier would run
 * backwards from the row before (loggers write in time order). NaN with `problem` when unreadable.
 */
export function loggerTime(text: string, timeZone: string, previousMs = -Infinity): { ms: number; problem?: string } {
	const trimmed = text.trim();
	const withOffset = parseIsoWithOffset(trimmed);
	if (!Number.isNaN(withOffset)) return { ms: withOffset };
	const m = localTime.exec(trimmed);
	if (!m) return { ms: Number.NaN, problem: `the time "${trimmed}" is not one Cellsitter reads: write 2026-03-14 21:30 (the workshop's time) or 2026-03-14T21:30:00+01:00` };
	const [y, mo, d, h, mi, s = '0', frac = '0'] = m.slice(1);
	const parts = [Number(y), Number(mo) - 1, Number(d), Number(h), Number(mi), Number(s), Number(frac.padEnd(3, '0'))] as const;
	const asUtc = Date.UTC(...parts);
	const check = new Date(asUtc);
	if (check.getUTCMonth() !== parts[1] || check.getUTCDate() !== parts[2] || parts[3] > 23 || parts[4] > 59 || parts[5] > 59)
		return { ms: Number.NaN, problem: `the time "${trimmed}" is not a real date and time` };
	// The offsets a few hours either side cover the instants this wall time may mean.
	const offsets = new Set([-3, 0, 3].map((hours) => -new TZDate(asUtc + hours * 3_600_000, timeZone).getTimezoneOffset()));
	const exact = [...offsets]
		.map((o) => asUtc - o * 60_000)
		.filter((t) => {
			const w = new TZDate(t, timeZone);
			return w.getFullYear() === parts[0] && w.getMonth() === parts[1] && w.getDate() === parts[2] && w.getHours() === parts[3] && w.getMinutes() === parts[4];
		})
		.sort((a, b) => a - b);
	if (exact.length === 0)
		return { ms: Number.NaN, problem: `${trimmed} does not exist in ${timeZone} (the clocks went forward then); write the time with its offset` };
	const ms = exact.length > 1 && exact[0] < previousMs ? exact[exact.length - 1] : exact[0];
	return { ms };
}

const units: Partial<Record<LoggerField, RegExp>> = {
	volts: /\s*v$/i,
	amps: /\s*a$/i,
	tempC: /\s*°?\s*c$/i,
	ambientC: /\s*°?\s*c$/i
};
const numberWords: Partial<Record<LoggerField, string>> = {
	volts: 'volts',
	amps: 'amps',
	tempC: 'cell temperature',
	ambientC: 'room temperature'
};

/**
 * Reads the whole file with the column map into readings for a pack of `series` groups: every
 * row right, or the problems by row (at most 100 listed). `now` bounds times in the future.
 */
export function parseLoggerCsv(
	text: string,
	mapping: LoggerMapping,
	options: { timeZone: string; series: number; now?: number }
): LoggerCsvResult {
	const whole = (message: string): LoggerCsvResult => ({ ok: false, errors: [{ row: 0, message }], readings: [] });
	if (text.length > LOGGER_CSV_MAX_BYTES)
		return whole(`The file is larger than ${LOGGER_CSV_MAX_BYTES / 1024 / 1024} MB. Split it into smaller files.`);
	const { rows } = records(text);
	const headerIndex = rows.findIndex((r) => r.some((f) => f.trim() !== ''));
	if (headerIndex < 0) return whole('The file is empty.');
	const header = rows[headerIndex].map((h) => h.trim());
	const column = new Map<LoggerField, number>();
	for (const field of loggerFields) {
		const name = mapping[field];
		if (!name) continue;
		const index = header.indexOf(name);
		if (index < 0)
			return whole(`The file has no column "${name}" (for ${loggerFieldWords[field].toLowerCase()}). Its columns are: ${header.filter(Boolean).map((h) => `"${h}"`).join(', ')}. Change the column map or choose the logger's file.`);
		column.set(field, index);
	}
	if (!column.has('time')) return whole('The column map names no time column. Choose which column holds the time.');
	let rowCount = 0;
	for (let i = headerIndex + 1; i < rows.length; i++) if (rows[i].some((f) => f.trim() !== '')) rowCount += 1;
	if (rowCount === 0) return whole('The file has a header row but no readings below it.');
	if (rowCount > LOGGER_CSV_MAX_ROWS)
		return whole(`The file has ${rowCount.toLocaleString('en-US')} readings; one upload takes at most ${LOGGER_CSV_MAX_ROWS.toLocaleString('en-US')}. Split it into smaller files.`);

	const errors: LoggerRowError[] = [];
	let unlisted = 0;
	const report = (row: number, message: string) => {
		if (errors.length < ERRORS_LISTED) errors.push({ row, message: `row ${row}: ${message}` });
		else unlisted += 1;
	};
	const readings: ReadingInput[] = [];
	const firstRowOf = new Map<string, number>();
	let previousMs = -Infinity;
	const now = options.now ?? Date.now();

	for (let i = headerIndex + 1; i < rows.length; i++) {
		const fields = rows[i];
		if (fields.every((f) => f.trim() === '')) continue;
		const row = i + 1;
		const cell = (field: LoggerField) => {
			const index = column.get(field);
			return index === undefined ? '' : (fields[index] ?? '').trim();
		};

		const time = loggerTime(cell('time'), options.timeZone, previousMs);
		if (Number.isNaN(time.ms)) {
			report(row, time.problem ?? 'the time cannot be read');
			continue;
		}
		previousMs = time.ms;

		let groupIndex: number | null = null;
		const groupText = cell('group');
		if (groupText !== '' && !/^(pack|whole pack|all|total)$/i.test(groupText)) {
			const n = Number(groupText.replace(/^(group|g)\s*/i, ''));
			if (!Number.isInteger(n) || n < 1 || n > options.series) {
				report(row, `group "${groupText}" is not one of this pack's groups 1 to ${options.series} (leave it empty, or write "pack", for the whole pack)`);
				continue;
			}
			groupIndex = n;
		}

		const values: Partial<Record<'volts' | 'amps' | 'tempC' | 'ambientC', number | null>> = {};
		let isReadable = true;
		for (const field of ['volts', 'amps', 'tempC', 'ambientC'] as const) {
			const raw = cell(field);
			if (raw === '') continue;
			const value = parseDecimal(raw.replace(units[field]!, ''));
			if (value === null) {
				report(row, `${numberWords[field]} "${raw}" is not a number`);
				isReadable = false;
			} else values[field] = value;
		}
		if (!isReadable) continue;

		const iso = new Date(time.ms).toISOString();
		const clientId = `file:${iso}:${groupIndex ?? 'pack'}`;
		const parsed = readingInputSchema.safeParse({ clientId, groupIndex, takenAt: iso, ...values, note: cell('note') || undefined });
		if (!parsed.success) {
			report(row, [...new Set(parsed.error.issues.map((issue) => issue.message))].join(' '));
			continue;
		}
		if (time.ms > now + READING_LIMITS.futureMinutes * 60_000) {
			report(row, 'the time is in the future; check the logger’s clock');
			continue;
		}
		if (groupIndex === null && values.volts != null && values.volts > options.series * READING_LIMITS.cellVoltsMax) {
			report(row, `${values.volts} V is more than a ${options.series}S pack can read; is the group column right?`);
			continue;
		}
		const first = firstRowOf.get(clientId);
		if (first !== undefined) {
			report(row, `same time and group as row ${first}; each reading needs its own time`);
			continue;
		}
		firstRowOf.set(clientId, row);
		readings.push(parsed.data);
	}

	if (errors.length === 0) return { ok: true, readings };
	if (unlisted) errors.push({ row: 0, message: `${unlisted} more problems are not listed. Fix the ones above and upload the file again.` });
	return { ok: false, errors, readings };
}
