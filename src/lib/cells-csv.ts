/**
 * The cell CSV (arrival measurements): the browser's preview and the server's import read a file
 * through the same code. This module turns the text into records with papaparse — its own chunking
 * when the browser wants to stay responsive — and hands them in order to the row checks
 * (cells-csv-rows.ts), which read the header through cells-csv-columns.ts.
 */
import Papa from 'papaparse';
import type { CellRow } from '$lib/schemas/cells';
import { describeHeader, type CellCsvColumn } from './cells-csv-columns';
import { createChecker, type CellCsvResult } from './cells-csv-rows';

export { cellRowSchema } from '$lib/schemas/cells';
export { parseDecimal, type CellCsvColumn } from './cells-csv-columns';
export { CELL_CSV_MAX_LISTED_ERRORS, CELL_CSV_MAX_ROWS, type CellCsvResult, type RowError } from './cells-csv-rows';
export type { CellRow };

/** Invented example values for a cylindrical Li-ion cell; the second row shows that mΩ and Ah may stay empty. */
export const cellCsvTemplate =
	'label,volts,resistance_mohm,capacity_ah\r\nA001,3.612,18.5,2.95\r\nA002,3.608,,\r\n';

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
	// and papaparse drops only a leading one.
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

const papaOptions = {
	newline: '\n',
	quoteChar: '"',
	escapeChar: '"',
	header: false,
	dynamicTyping: false,
	skipEmptyLines: false
} as const;

/**
 * Passes each chunk's records to the checker with their row numbers (rows count on across chunks;
 * papaparse numbers a chunk's quote errors from 0 within the chunk).
 */
function recordFeeder(checker: ReturnType<typeof createChecker>) {
	let rowsBefore = 0;
	return (results: Papa.ParseResult<string[]>) => {
		const quoteProblemByIndex = new Map<number, string>();
		for (const error of results.errors)
			if (error.type === 'Quotes' && error.row !== undefined && !quoteProblemByIndex.has(error.row))
				quoteProblemByIndex.set(error.row, error.code);
		results.data.forEach((fields, index) => checker.accept(fields, rowsBefore + index + 1, quoteProblemByIndex.get(index)));
		rowsBefore += results.data.length;
	};
}

/** Parses and checks an arrival-measurement CSV in one go (the server's way: the whole file, all or nothing). */
export function parseCellCsv(text: string): CellCsvResult {
	const { body, delimiter } = prepare(text);
	const checker = createChecker(delimiter);
	const feed = recordFeeder(checker);
	// Without a chunk size papaparse hands over the whole text as one chunk, synchronously.
	Papa.parse<string[]>(body, {
		...papaOptions,
		delimiter,
		chunk: (results: Papa.ParseResult<string[]>, parser: Papa.Parser) => {
			feed(results);
			if (checker.isStopped) parser.abort();
		},
		complete: () => {}
	});
	return checker.finish();
}

/** Characters per chunk: about 400 rows of four columns, a few milliseconds of work even on a slow phone. */
const CHUNK_CHARS = 16_384;

/**
 * The same result as parseCellCsv, read in papaparse's chunks with a pause for the event loop
 * after each, so a 20,000-row file never freezes the page. papaparse carries a record cut by a
 * chunk's end (quoted line ends included) over to the next chunk. `onProgress` gets the share
 * done (0..1), ending with 1.
 */
export function parseCellCsvChunked(
	text: string,
	onProgress: (fraction: number) => void,
	options: { chunkChars?: number } = {}
): Promise<CellCsvResult> {
	const { body, delimiter } = prepare(text);
	const checker = createChecker(delimiter);
	const feed = recordFeeder(checker);
	onProgress(0);
	return new Promise((resolve) => {
		let isSettled = false;
		const settle = () => {
			if (isSettled) return;
			isSettled = true;
			onProgress(1);
			resolve(checker.finish());
		};
		Papa.parse<string[]>(body, {
			...papaOptions,
			delimiter,
			chunkSize: Math.max(1, Math.floor(options.chunkChars ?? CHUNK_CHARS)),
			// papaparse streams a string in chunks as it does a file (its StringStreamer), though
			// its types mention chunk for files only.
			chunk: (results: Papa.ParseResult<string[]>, parser: Papa.Parser) => {
				feed(results);
				if (checker.isStopped) return parser.abort();
				if (body.length) onProgress(Math.min(1, results.meta.cursor / body.length));
				parser.pause();
				setTimeout(() => parser.resume(), 0);
			},
			complete: settle
		});
	});
}

/** Which header names were read as which column, and which were not read at all (for the preview). */
export function describeCellCsvColumns(text: string): {
	delimiter: string;
	columns: Partial<Record<CellCsvColumn, string>>;
	ignored: string[];
} {
	const { body, delimiter, headerStart } = prepare(text);
	const fields = Papa.parse<string[]>(body.slice(headerStart), { ...papaOptions, delimiter, preview: 1 }).data[0] ?? [];
	return { delimiter, ...describeHeader(fields) };
}
