import Papa from 'papaparse';
import { CELL_BATCH_MAX_CELLS, CELL_LIMITS, cellLabelKey, type CellRow } from '$lib/schemas/cells';
import { hasControlCharacter } from '$lib/schemas/text';

export { cellRowSchema } from '$lib/schemas/cells';
export type { CellRow };

/** The template's column names: how messages name a column, whatever alias the file used. */
export type CellCsvColumn = 'label' | 'volts' | 'resistance_mohm' | 'capacity_ah';

/**
 * One problem in an uploaded file. `row` is the row a spreadsheet shows: the file's first line is
 * row 1 (normally the header), so the first cell below the header is row 2. Empty lines count,
 * because a spreadsheet shows them as empty rows; a leading Excel `sep=` line does not, because
 * Excel hides it. Row 0 means the whole file (a missing column, no cells, too many cells).
 * `message` is complete and plain; row problems start with "row N: ".
 */
export interface RowError {
	row: number;
	field?: CellCsvColumn;
	message: string;
}

/** On failure, `rows` still holds the valid rows so a preview can show them. */
export type CellCsvResult =
	| { ok: true; rows: CellRow[] }
	| { ok: false; errors: RowError[]; rows: CellRow[] };

export const CELL_CSV_MAX_ROWS = CELL_BATCH_MAX_CELLS;

/** Problems listed one by one; past this a single line counts the rest (a wrong column repeats on every row). */
export const CELL_CSV_MAX_LISTED_ERRORS = 100;

/** Invented example values for a cylindrical Li-ion cell; the second row shows that mΩ and Ah may stay empty. */
export const cellCsvTemplate =
	'label,volts,resistance_mohm,capacity_ah\r\nA001,3.612,18.5,2.95\r\nA002,3.608,,\r\n';

interface ColumnSpec {
	column: CellCsvColumn;
	/** Multiplier to the template's unit (mAh → Ah). */
	scale: number;
}

const columnAliases: [ColumnSpec, string[]][] = [
	[{ column: 'label', scale: 1 }, ['label', 'cell', 'cell_label', 'cell_id', 'cell_name', 'id', 'name']],
	[
		{ column: 'volts', scale: 1 },
		['volts', 'volt', 'voltage', 'v', 'volts_v', 'voltage_v', 'arrival_volts', 'arrival_voltage']
	],
	[
		{ column: 'resistance_mohm', scale: 1 },
		[
			'resistance_mohm',
			'resistance',
			'resistance_milliohm',
			'resistance_milliohms',
			'ir',
			'ir_mohm',
			'internal_resistance',
			'internal_resistance_mohm',
			'mohm'
		]
	],
	[{ column: 'capacity_ah', scale: 1 }, ['capacity_ah', 'capacity', 'ah', 'measured_capacity_ah']],
	// Cell testers usually report mAh; reading such a column as Ah would be off by a thousand.
	[{ column: 'capacity_ah', scale: 0.001 }, ['capacity_mah', 'mah', 'measured_capacity_mah']]
];

const columnByHeader = new Map<string, ColumnSpec>(
	columnAliases.flatMap(([spec, names]) => names.map((name): [string, ColumnSpec] => [name, spec]))
);

/** "Resistance (mΩ)" → "resistance_mohm"; the ohm sign, Greek capital omega and its lower case all read as "ohm". */
function headerKey(name: string): string {
	return name
		.trim()
		.toLowerCase()
		.replace(/[\u03a9\u03c9\u2126]/g, 'ohm')
		.replace(/[^a-z0-9]+/g, '_')
		.replace(/^_+|_+$/g, '');
}

/** A trailing unit the value may carry ("3.61 V", "18 mΩ"), by column and scale. */
function unitPattern(spec: ColumnSpec): RegExp {
	if (spec.column === 'volts') return /\s*v$/i;
	if (spec.column === 'resistance_mohm') return /\s*m(?:ohm|[\u03a9\u03c9\u2126])$/i;
	return spec.scale === 1 ? /\s*ah$/i : /\s*mah$/i;
}

const decimalPattern = /^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)$/;

/** A number with a decimal point or a decimal comma ("3.612", "3,612"); null when it is not one. No thousands separators. */
export function parseDecimal(text: string): number | null {
	const trimmed = text.trim();
	return decimalPattern.test(trimmed) ? Number(trimmed.replace(',', '.')) : null;
}

const candidateDelimiters = ['\t', ';', ','] as const;

interface Prepared {
	/** The text without byte-order marks and `sep=` line, every line end turned into "\n". */
	body: string;
	delimiter: string;
	/** Where the first non-blank line (the header) starts in body. */
	headerStart: number;
}

/**
 * The header names no numbers, so its most frequent separator is the file's. A decimal-comma
 * spreadsheet writes `label;volts`, whose data rows also hold commas; counting the header avoids
 * that trap. Ties go to tab, then semicolon; no separator at all means a one-column comma file.
 */
function prepare(text: string): Prepared {
	// Every byte-order mark goes, not only a leading one: files glued together carry one per part,
	// and papaparse would drop one only where a slice happens to start.
	let body = text.replace(/\uFEFF/g, '').replace(/\r\n?/g, '\n');
	// Excel's hint line; a re-saved file may pad it with separators (`sep=;;;;`).
	const sepLine = /^"?sep=([^\n])[^\n]*(?:\n|$)/i.exec(body);
	if (sepLine) body = body.slice(sepLine[0].length);

	let headerStart = 0;
	let headerLine = '';
	while (headerStart < body.length) {
		const end = body.indexOf('\n', headerStart);
		headerLine = body.slice(headerStart, end < 0 ? body.length : end);
		if (headerLine.trim() !== '') break;
		headerStart = end < 0 ? body.length : end + 1;
	}
	if (sepLine) return { body, delimiter: sepLine[1], headerStart };

	let delimiter: string = ',';
	let best = 0;
	for (const candidate of candidateDelimiters) {
		const count = headerLine.split(candidate).length - 1;
		if (count > best) {
			best = count;
			delimiter = candidate;
		}
	}
	return { body, delimiter, headerStart };
}

interface ColumnMap {
	width: number;
	indexes: Map<CellCsvColumn, { index: number; spec: ColumnSpec }>;
	ignored: string[];
}

function mapHeader(fields: string[]): { map: ColumnMap } | { message: string } {
	const indexes: ColumnMap['indexes'] = new Map();
	const ignored: string[] = [];
	for (const [index, raw] of fields.entries()) {
		const name = raw.trim();
		if (name === '') continue;
		const spec = columnByHeader.get(headerKey(name));
		if (!spec) {
			ignored.push(name);
			continue;
		}
		const earlier = indexes.get(spec.column);
		if (earlier)
			return {
				message: `The header row has two ${spec.column} columns ("${fields[earlier.index].trim()}" and "${name}"). Keep one of them.`
			};
		indexes.set(spec.column, { index, spec });
	}
	const missing = (['label', 'volts'] as const).filter((c) => !indexes.has(c));
	if (missing.length > 0) {
		const named = fields.map((f) => f.trim()).filter((f) => f !== '');
		const found = named.length ? `It names: ${named.slice(0, 8).map((f) => `"${f}"`).join(', ')}.` : 'It is empty.';
		return {
			message:
				`The header row needs a ${missing.join(' and a ')} column. ${found} ` +
				'The first row must name the columns, as in the template: label, volts, resistance_mohm, capacity_ah.'
		};
	}
	return { map: { width: fields.length, indexes, ignored } };
}

const isBlank = (field: string | undefined) => field === undefined || field.trim() === '';

const quoteProblems: Record<string, string> = {
	MissingQuotes: 'a value opens with a quotation mark that is never closed',
	InvalidQuotes: 'a quoted value has text after its closing quotation mark'
};

/** Checks records in file order; the same instance sees every record, however the text was sliced. */
function createChecker(delimiter: string) {
	let map: ColumnMap | null = null;
	let fileError: string | null = null;
	let dataRows = 0;
	let unlisted = 0;
	const rows: CellRow[] = [];
	const errors: RowError[] = [];
	const firstRowOfLabel = new Map<string, number>();

	const report = (error: RowError) => {
		if (errors.length < CELL_CSV_MAX_LISTED_ERRORS) errors.push(error);
		else unlisted += 1;
	};

	/** An optional measurement: null when empty, undefined after reporting a problem. */
	function optionalNumber(
		fields: string[],
		row: number,
		column: CellCsvColumn,
		maximum: number
	): number | null | undefined {
		const found = map?.indexes.get(column);
		const raw = found ? (fields[found.index] ?? '').trim() : '';
		if (!found || raw === '') return null;
		const parsed = parseDecimal(raw.replace(unitPattern(found.spec), ''));
		const value = parsed === null ? null : parsed * found.spec.scale;
		if (value !== null && value > 0 && value <= maximum) return value;
		const hint =
			column === 'capacity_ah' && found.spec.scale === 1 && value !== null && value > maximum && value <= maximum * 1000
				? `; if that is mAh, write ${value / 1000}`
				: '';
		report({
			row,
			field: column,
			message: `row ${row}: ${column} must be empty or a number above 0 and at most ${maximum} (got "${raw}"${hint})`
		});
		return undefined;
	}

	function checkCell(fields: string[], row: number, columns: ColumnMap): void {
		let isValid = true;

		const label = (fields[columns.indexes.get('label')!.index] ?? '').trim();
		const labelLength = [...label].length;
		if (label === '') {
			isValid = false;
			report({ row, field: 'label', message: `row ${row}: label is empty; every cell needs a label` });
		} else if (hasControlCharacter(label)) {
			// PostgreSQL cannot keep NUL, and no label means a control character.
			isValid = false;
			report({ row, field: 'label', message: `row ${row}: label holds a control character; use letters, digits and punctuation only` });
		} else if (labelLength > CELL_LIMITS.labelMaxChars) {
			isValid = false;
			report({
				row,
				field: 'label',
				message: `row ${row}: label must be at most ${CELL_LIMITS.labelMaxChars} characters (it has ${labelLength})`
			});
		} else {
			const key = cellLabelKey(label);
			const first = firstRowOfLabel.get(key);
			if (first === undefined) firstRowOfLabel.set(key, row);
			else {
				isValid = false;
				report({
					row,
					field: 'label',
					message: `row ${row}: label "${label}" is also used on row ${first}; each cell needs its own label`
				});
			}
		}

		const voltsColumn = columns.indexes.get('volts')!;
		const voltsRaw = (fields[voltsColumn.index] ?? '').trim();
		const volts = parseDecimal(voltsRaw.replace(unitPattern(voltsColumn.spec), ''));
		if (volts === null || volts < CELL_LIMITS.voltsMin || volts > CELL_LIMITS.voltsMax) {
			isValid = false;
			report({
				row,
				field: 'volts',
				message: `row ${row}: volts must be a number between ${CELL_LIMITS.voltsMin} and ${CELL_LIMITS.voltsMax} (${voltsRaw === '' ? 'it is empty' : `got "${voltsRaw}"`})`
			});
		}

		const resistanceMilliOhms = optionalNumber(fields, row, 'resistance_mohm', CELL_LIMITS.resistanceMaxMilliOhms);
		const capacityAh = optionalNumber(fields, row, 'capacity_ah', CELL_LIMITS.capacityMaxAh);

		if (isValid && volts !== null && resistanceMilliOhms !== undefined && capacityAh !== undefined)
			rows.push({ label, volts, resistanceMilliOhms, capacityAh });
	}

	return {
		get isStopped() {
			return fileError !== null;
		},

		accept(fields: string[], row: number, quoteProblem: string | undefined): void {
			if (fileError !== null || fields.every(isBlank)) return;
			if (map === null) {
				const header = mapHeader(fields);
				if ('message' in header) fileError = header.message;
				else map = header.map;
				return;
			}
			dataRows += 1;
			if (dataRows > CELL_CSV_MAX_ROWS) return;

			if (quoteProblem) {
				report({ row, message: `row ${row}: ${quoteProblems[quoteProblem] ?? 'its quotation marks are not balanced'}` });
				return;
			}
			let valueCount = fields.length;
			while (valueCount > 0 && isBlank(fields[valueCount - 1])) valueCount -= 1;
			if (valueCount > map.width) {
				const hint =
					delimiter === ','
						? '; numbers with a decimal comma need semicolons between the columns, or quotes around the numbers'
						: '';
				report({ row, message: `row ${row} has ${valueCount} values but the header row names ${map.width} columns${hint}` });
				return;
			}
			checkCell(fields, row, map);
		},

		finish(): CellCsvResult {
			const whole = (message: string): CellCsvResult => ({ ok: false, errors: [{ row: 0, message }], rows: [] });
			if (fileError !== null) return whole(fileError);
			if (map === null) return whole('The file is empty.');
			if (dataRows === 0) return whole('The file has a header row but no cells below it.');
			if (dataRows > CELL_CSV_MAX_ROWS)
				return whole(
					`The file has ${dataRows.toLocaleString('en-US')} cells; one upload takes at most ${CELL_CSV_MAX_ROWS.toLocaleString('en-US')}. Split it into smaller files.`
				);
			if (errors.length === 0) return { ok: true, rows };
			const listed = unlisted
				? [...errors, { row: 0, message: `${unlisted} more problems are not listed. Fix the ones above and upload the file again.` }]
				: errors;
			return { ok: false, errors: listed, rows };
		}
	};
}

/**
 * Where to end a slice: the first line end at or after `minEnd` that is outside a quoted value,
 * following papaparse's quote rules (a quote opens a value only at its start; `""` inside is a
 * quote; a closing quote is followed by optional spaces, then a separator or a line end).
 */
function findSliceEnd(body: string, from: number, minEnd: number, delimiter: string): number {
	let isQuoted = false;
	let isFieldStart = true;
	for (let i = from; i < body.length; i++) {
		const c = body[i];
		if (isQuoted) {
			if (c !== '"') continue;
			if (body[i + 1] === '"') {
				i += 1;
				continue;
			}
			let j = i + 1;
			while (j < body.length && body[j] !== delimiter && body[j] !== '\n' && body[j].trim() === '') j += 1;
			if (j >= body.length || body[j] === delimiter || body[j] === '\n') {
				isQuoted = false;
				i = j - 1;
			}
			continue;
		}
		if (c === '\n') {
			if (i >= minEnd) return i;
			isFieldStart = true;
		} else if (c === delimiter) {
			isFieldStart = true;
		} else {
			if (c === '"' && isFieldStart) isQuoted = true;
			isFieldStart = false;
		}
	}
	return body.length;
}

/** Parses slice after slice, yielding the share of the text done after each; returns the result. */
function* parseSteps(text: string, sliceChars: number): Generator<number, CellCsvResult, void> {
	const { body, delimiter } = prepare(text);
	const checker = createChecker(delimiter);
	let start = 0;
	let rowsBefore = 0;
	while (start < body.length && !checker.isStopped) {
		const cut = body.length - start <= sliceChars ? body.length : findSliceEnd(body, start, start + sliceChars, delimiter);
		// A slice keeps its closing line end: papaparse reads `"x" ` before a line end as a closed
		// quote, but before the end of its input as a broken one.
		const end = cut < body.length ? cut + 1 : body.length;
		const parsed = Papa.parse<string[]>(body.slice(start, end), {
			delimiter,
			newline: '\n',
			quoteChar: '"',
			escapeChar: '"',
			header: false,
			dynamicTyping: false,
			skipEmptyLines: false
		});
		const quoteProblemByIndex = new Map<number, string>();
		for (const error of parsed.errors)
			if (error.type === 'Quotes' && error.row !== undefined && !quoteProblemByIndex.has(error.row))
				quoteProblemByIndex.set(error.row, error.code);
		const records = parsed.data;
		// That line end makes papaparse add an empty record that belongs to the next slice.
		const last = records[records.length - 1];
		if (end < body.length && last?.length === 1 && last[0] === '') records.pop();
		records.forEach((fields, index) => checker.accept(fields, rowsBefore + index + 1, quoteProblemByIndex.get(index)));
		rowsBefore += records.length;
		start = end;
		if (start < body.length) yield start / body.length;
	}
	return checker.finish();
}

/** Parses and checks an arrival-measurement CSV in one go (the server's way: the whole file, all or nothing). */
export function parseCellCsv(text: string): CellCsvResult {
	const steps = parseSteps(text, Infinity);
	for (;;) {
		const step = steps.next();
		if (step.done) return step.value;
	}
}

/** Characters per slice: about 400 rows of four columns, a few milliseconds of work even on a slow phone. */
const SLICE_CHARS = 16_384;

/**
 * The same result as parseCellCsv, in slices with a pause for the event loop between them so a
 * 20,000-row file never freezes the page. `onProgress` gets the share done (0..1), ending with 1.
 */
export async function parseCellCsvChunked(
	text: string,
	onProgress: (fraction: number) => void,
	options: { sliceChars?: number } = {}
): Promise<CellCsvResult> {
	const steps = parseSteps(text, Math.max(1, options.sliceChars ?? SLICE_CHARS));
	onProgress(0);
	for (;;) {
		const step = steps.next();
		if (step.done) {
			onProgress(1);
			return step.value;
		}
		onProgress(step.value);
		await new Promise<void>((resolve) => setTimeout(resolve, 0));
	}
}

/** Which header names were read as which column, and which were not read at all (for the preview). */
export function describeCellCsvColumns(text: string): {
	delimiter: string;
	columns: Partial<Record<CellCsvColumn, string>>;
	ignored: string[];
} {
	const { body, delimiter, headerStart } = prepare(text);
	const end = findSliceEnd(body, headerStart, headerStart, delimiter);
	const fields = Papa.parse<string[]>(body.slice(headerStart, end), { delimiter, newline: '\n', quoteChar: '"' }).data[0] ?? [];
	const columns: Partial<Record<CellCsvColumn, string>> = {};
	const ignored: string[] = [];
	for (const raw of fields) {
		const name = raw.trim();
		if (name === '') continue;
		const spec = columnByHeader.get(headerKey(name));
		if (spec && !columns[spec.column]) columns[spec.column] = name;
		else ignored.push(name);
	}
	return { delimiter, columns, ignored };
}
