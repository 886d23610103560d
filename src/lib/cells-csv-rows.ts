/**
 * The checks of a cell CSV's records, in file order: the header first, then every cell row against
 * the limits of one arrival measurement. Knows nothing of how the text was split into records.
 */
import { CELL_BATCH_MAX_CELLS, CELL_LIMITS, cellLabelKey, type CellRow } from '$lib/schemas/cells';
import { hasControlCharacter } from '$lib/schemas/text';
import { columnWords, mapHeader, parseDecimal, unitPattern, type CellCsvColumn, type ColumnMap } from './cells-csv-columns';

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

const isBlank = (field: string | undefined) => field === undefined || field.trim() === '';

const quoteProblems: Record<string, string> = {
	MissingQuotes: 'a value opens with a quotation mark that is never closed',
	InvalidQuotes: 'a quoted value has text after its closing quotation mark'
};

/** Checks records in file order; the same instance sees every record, however papaparse chunked the text. */
export function createChecker(delimiter: string) {
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
			message: `row ${row}: ${columnWords[column].name} must be empty or a number of ${columnWords[column].unit} above 0 and at most ${maximum} (got "${raw}"${hint})`
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
				message: `row ${row}: voltage must be a number of volts between ${CELL_LIMITS.voltsMin} and ${CELL_LIMITS.voltsMax} (${voltsRaw === '' ? 'it is empty' : `got "${voltsRaw}"`})`
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

