// All cell labels and measurements below are invented test data.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
	CELL_CSV_MAX_LISTED_ERRORS,
	CELL_CSV_MAX_ROWS,
	cellCsvTemplate,
	describeCellCsvColumns,
	parseCellCsv,
	parseCellCsvChunked,
	parseDecimal,
	type CellCsvResult,
	type CellRow
} from './cells-csv';
import { cellBatchSchema, cellCorrectionSchema, cellRowSchema } from './schemas/cells';

const threeCells: CellRow[] = [
	{ label: 'C1', volts: 3.612, resistanceMilliOhms: 18.5, capacityAh: 4.01 },
	{ label: 'C2', volts: 3.598, resistanceMilliOhms: 21, capacityAh: null },
	{ label: 'C3', volts: 2.9, resistanceMilliOhms: null, capacityAh: 3.87 }
];

function rowsOf(result: CellCsvResult): CellRow[] {
	if (!result.ok) throw new Error(`expected ok, got ${JSON.stringify(result.errors)}`);
	return result.rows;
}

function errorsOf(result: CellCsvResult) {
	if (result.ok) throw new Error('expected problems, got ok');
	return result.errors;
}

const header = 'label,volts,resistance_mohm,capacity_ah';

describe('parseCellCsv: the same cells in the shapes spreadsheets write', () => {
	it.each([
		['comma, decimal point', `${header}\nC1,3.612,18.5,4.01\nC2,3.598,21,\nC3,2.9,,3.87\n`],
		['semicolon, decimal comma', 'label;volts;resistance_mohm;capacity_ah\nC1;3,612;18,5;4,01\nC2;3,598;21;\nC3;2,9;;3,87\n'],
		['byte-order mark, comma', `\uFEFF${header}\nC1,3.612,18.5,4.01\nC2,3.598,21,\nC3,2.9,,3.87`],
		[
			'byte-order mark, semicolon, decimal comma, CRLF',
			'\uFEFFlabel;volts;resistance_mohm;capacity_ah\r\nC1;3,612;18,5;4,01\r\nC2;3,598;21;\r\nC3;2,9;;3,87\r\n'
		],
		['tab-separated', 'label\tvolts\tresistance_mohm\tcapacity_ah\nC1\t3.612\t18.5\t4.01\nC2\t3.598\t21\t\nC3\t2.9\t\t3.87\n'],
		['CRLF line ends', `${header}\r\nC1,3.612,18.5,4.01\r\nC2,3.598,21,\r\nC3,2.9,,3.87\r\n`],
		['old Mac CR line ends', `${header}\rC1,3.612,18.5,4.01\rC2,3.598,21,\rC3,2.9,,3.87\r`],
		['Excel sep= line', `sep=;\nlabel;volts;resistance_mohm;capacity_ah\nC1;3,612;18,5;4,01\nC2;3,598;21;\nC3;2,9;;3,87\n`],
		['Excel sep= line padded by a re-save', `sep=;;;;\r\nlabel;volts;resistance_mohm;capacity_ah\r\nC1;3,612;18,5;4,01\r\nC2;3,598;21;\r\nC3;2,9;;3,87\r\n`],
		['quoted decimal commas in a comma file', `${header}\nC1,"3,612","18,5","4,01"\n"C2","3,598",21,\nC3,"2,9",,"3,87"\n`],
		['spaces, empty lines and trailing separators', `\n${header}\n  C1 , 3.612 , 18.5 , 4.01 \n\nC2,3.598,21,,\n,,\nC3,2.9,,3.87,,\n\n`],
		['units written after the numbers', `${header}\nC1,3.612 V,18.5 mΩ,4.01 Ah\nC2,3.598V,21mohm,\nC3,2.9 v,,3.87ah\n`]
	])('%s', (_name, text) => {
		expect(rowsOf(parseCellCsv(text))).toEqual(threeCells);
	});
});

describe('parseCellCsv: header names', () => {
	it.each([
		['Cell,Voltage,IR (mΩ),Capacity (Ah)', [3.612, 18.5, 4.01]],
		['LABEL;VOLTS;Resistance_mΩ;capacity', [3.612, 18.5, 4.01]],
		['label,volts,ir_mohm,capacity_ah', [3.612, 18.5, 4.01]],
		['Label,Volts,Resistance (mΩ),Capacity (mAh)', [3.612, 18.5, 4.01]],
		['volts,label', [3.612, null, null]]
	])('%s', (headerLine, [volts, resistanceMilliOhms, capacityAh]) => {
		const delimiter = headerLine.includes(';') ? ';' : ',';
		const isMah = /mah/i.test(headerLine);
		const values = headerLine.startsWith('volts')
			? ['3.612', 'C1']
			: ['C1', '3.612', '18.5', isMah ? '4010' : '4.01'];
		const text = `${headerLine}\n${values.map((v) => (delimiter === ';' ? v.replace('.', ',') : v)).join(delimiter)}\n`;
		expect(rowsOf(parseCellCsv(text))).toEqual([{ label: 'C1', volts, resistanceMilliOhms, capacityAh }]);
	});

	it('reports a missing volts column once, for the whole file', () => {
		const result = parseCellCsv('label,resistance_mohm\nC1,18\nC2,19\n');
		expect(result).toEqual({ ok: false, rows: [], errors: [{ row: 0, message: expect.stringContaining('volts column') }] });
	});

	it('reports missing label and volts columns in one message', () => {
		const errors = errorsOf(parseCellCsv('3.61,18\n3.62,19\n'));
		expect(errors).toHaveLength(1);
		expect(errors[0].message).toContain('needs a label and a volts column');
	});

	it('refuses two columns that mean the same thing', () => {
		const errors = errorsOf(parseCellCsv('label,volts,voltage\nC1,3.6,3.6\n'));
		expect(errors).toEqual([{ row: 0, message: expect.stringContaining('two voltage columns ("volts" and "voltage")') }]);
	});

	it('names the columns it does not read, so a mis-named one is noticed', () => {
		expect(describeCellCsvColumns('\uFEFFCell;Voltage;resistance_ohm;notes\nC1;3,6;0,02;x\n')).toEqual({
			delimiter: ';',
			columns: { label: 'Cell', volts: 'Voltage' },
			ignored: ['resistance_ohm', 'notes']
		});
	});
});

describe('parseCellCsv: problems in plain words', () => {
	const good = 'C1,3.612,18.5,4.01\nC2,3.598,21,3.9';
	it.each([
		['volts', 'C3,abc,20,4', 'row 4: voltage must be a number of volts between 0 and 5 (got "abc")'],
		['volts', 'C3,5.01,20,4', 'row 4: voltage must be a number of volts between 0 and 5 (got "5.01")'],
		['volts', 'C3,-0.1,20,4', 'row 4: voltage must be a number of volts between 0 and 5 (got "-0.1")'],
		['volts', 'C3,,20,4', 'row 4: voltage must be a number of volts between 0 and 5 (it is empty)'],
		['volts', 'C3,3.6.1,20,4', 'row 4: voltage must be a number of volts between 0 and 5 (got "3.6.1")'],
		['resistance_mohm', 'C3,3.6,0,4', 'row 4: resistance must be empty or a number of milliohms above 0 and at most 10000 (got "0")'],
		['resistance_mohm', 'C3,3.6,10001,4', 'row 4: resistance must be empty or a number of milliohms above 0 and at most 10000 (got "10001")'],
		['capacity_ah', 'C3,3.6,20,-1', 'row 4: capacity must be empty or a number of amp-hours above 0 and at most 2000 (got "-1")'],
		['capacity_ah', 'C3,3.6,20,2500', 'row 4: capacity must be empty or a number of amp-hours above 0 and at most 2000 (got "2500"; if that is mAh, write 2.5)'],
		['label', ',3.6,20,4', 'row 4: label is empty; every cell needs a label'],
		['label', `${'x'.repeat(61)},3.6,20,4`, 'row 4: label must be at most 60 characters (it has 61)']
	])('a bad %s on row 4: %s', (field, badLine, message) => {
		const result = parseCellCsv(`${header}\n${good}\n${badLine}\nC4,3.601,19,4\n`);
		expect(result.ok).toBe(false);
		expect(errorsOf(result)).toEqual([{ row: 4, field, message }]);
		// The valid rows stay available for the preview.
		expect(result.rows.map((r) => r.label)).toEqual(['C1', 'C2', 'C4']);
	});

	it('counts empty lines as rows, as a spreadsheet shows them', () => {
		const errors = errorsOf(parseCellCsv(`${header}\n\nC1,3.6\n\n\nC2,9\n`));
		expect(errors).toEqual([{ row: 6, field: 'volts', message: 'row 6: voltage must be a number of volts between 0 and 5 (got "9")' }]);
	});

	it('counts a quoted value spread over two lines as one row', () => {
		// The line break keeps the quoted label one row (2); a label may not hold one, so row 2 is
		// refused for that, and the next problem is still counted as row 3.
		const errors = errorsOf(parseCellCsv(`${header}\n"C1\nleft",3.6\nC2,x\n`));
		expect(errors.map((e) => [e.row, e.field])).toEqual([
			[2, 'label'],
			[3, 'volts']
		]);
	});

	it('names both rows of a duplicate label, ignoring case', () => {
		const result = parseCellCsv(`${header}\nC1,3.6\nC2,3.6\nc1,3.7\nC2,3.7\n`);
		expect(errorsOf(result)).toEqual([
			{ row: 4, field: 'label', message: 'row 4: label "c1" is also used on row 2; each cell needs its own label' },
			{ row: 5, field: 'label', message: 'row 5: label "C2" is also used on row 3; each cell needs its own label' }
		]);
		expect(result.rows.map((r) => r.label)).toEqual(['C1', 'C2']);
	});

	it('lists every problem of one row', () => {
		const errors = errorsOf(parseCellCsv(`${header}\nC1,x,-2,0\n`));
		expect(errors.map((e) => e.field)).toEqual(['volts', 'resistance_mohm', 'capacity_ah']);
	});

	it('explains decimal commas in a comma-separated file', () => {
		const errors = errorsOf(parseCellCsv(`${header}\nC1,3,612,18,5,4,01\n`));
		expect(errors).toEqual([
			{
				row: 2,
				message:
					'row 2 has 7 values but the header row names 4 columns; numbers with a decimal comma need semicolons between the columns, or quotes around the numbers'
			}
		]);
	});

	it('names the row of a quotation mark that is never closed', () => {
		const errors = errorsOf(parseCellCsv(`${header}\nC1,3.6\n"C2,3.6\nC3,3.6\n`));
		expect(errors).toEqual([{ row: 3, message: 'row 3: a value opens with a quotation mark that is never closed' }]);
	});

	it.each([
		['an empty file', ''],
		['only a byte-order mark and blank lines', '\uFEFF\r\n\r\n'],
		['a header without cells', `${header}\n\n`]
	])('refuses %s', (_name, text) => {
		const errors = errorsOf(parseCellCsv(text));
		expect(errors).toHaveLength(1);
		expect(errors[0].row).toBe(0);
	});

	it(`refuses more than ${CELL_CSV_MAX_ROWS} cells`, () => {
		const lines = Array.from({ length: CELL_CSV_MAX_ROWS + 1 }, (_, i) => `N${i},3.6`);
		expect(parseCellCsv(`label,volts\n${lines.join('\n')}`)).toEqual({
			ok: false,
			rows: [],
			errors: [{ row: 0, message: 'The file has 20,001 cells; one upload takes at most 20,000. Split it into smaller files.' }]
		});
	});

	it(`lists at most ${CELL_CSV_MAX_LISTED_ERRORS} problems and counts the rest`, () => {
		const lines = Array.from({ length: 150 }, (_, i) => `N${i},3.6 volts`);
		const errors = errorsOf(parseCellCsv(`label,volts\n${lines.join('\n')}`));
		expect(errors).toHaveLength(CELL_CSV_MAX_LISTED_ERRORS + 1);
		expect(errors[CELL_CSV_MAX_LISTED_ERRORS]).toEqual({
			row: 0,
			message: '50 more problems are not listed. Fix the ones above and upload the file again.'
		});
	});
});

describe('parseCellCsv: values', () => {
	it('reads empty optional fields and missing optional columns as null', () => {
		expect(rowsOf(parseCellCsv(`${header}\nC1,3.6,,\nC2,3.7, , \n`))).toEqual([
			{ label: 'C1', volts: 3.6, resistanceMilliOhms: null, capacityAh: null },
			{ label: 'C2', volts: 3.7, resistanceMilliOhms: null, capacityAh: null }
		]);
		expect(rowsOf(parseCellCsv('label;volts\nC1;0\nC2;5\n'))).toEqual([
			{ label: 'C1', volts: 0, resistanceMilliOhms: null, capacityAh: null },
			{ label: 'C2', volts: 5, resistanceMilliOhms: null, capacityAh: null }
		]);
	});

	it('keeps separators and quotes inside quoted labels', () => {
		expect(rowsOf(parseCellCsv(`${header}\n"Box 2, ""left""",3.6\n`))[0].label).toBe('Box 2, "left"');
	});

	it('gives rows that the JSON API schema accepts unchanged', () => {
		const rows = rowsOf(parseCellCsv(`${header}\nC1,3.612,18.5,4.01\nC2,0,,\nC3,5,10000,2000\n`));
		for (const row of rows) expect(cellRowSchema.parse(row)).toEqual(row);
	});

	it('parses its own template', () => {
		expect(rowsOf(parseCellCsv(cellCsvTemplate))).toHaveLength(2);
	});

	it.each([
		['3.612', 3.612],
		['3,612', 3.612],
		[' 0,5 ', 0.5],
		['.5', 0.5],
		['+4', 4],
		['1.234,5', null],
		['1e3', null],
		['', null],
		['3 612', null]
	])('parseDecimal(%j) is %j', (text, expected) => {
		expect(parseDecimal(text)).toBe(expected);
	});

	it('parses 10,000 generated rows', () => {
		const lines = Array.from(
			{ length: 10_000 },
			(_, i) => `B${String(i).padStart(5, '0')};${(3 + (i % 1000) / 1000).toFixed(3).replace('.', ',')};${10 + (i % 40)};${i % 7 === 0 ? '' : '2,5'}`
		);
		const rows = rowsOf(parseCellCsv(`label;volts;resistance_mohm;capacity_ah\r\n${lines.join('\r\n')}\r\n`));
		expect(rows).toHaveLength(10_000);
		expect(rows[0]).toEqual({ label: 'B00000', volts: 3, resistanceMilliOhms: 10, capacityAh: null });
		expect(rows[1234]).toEqual({ label: 'B01234', volts: 3.234, resistanceMilliOhms: 44, capacityAh: 2.5 });
		expect(rows[9999]).toEqual({ label: 'B09999', volts: 3.999, resistanceMilliOhms: 49, capacityAh: 2.5 });
	});
});

describe('parseCellCsvChunked', () => {
	const big = `${header}\n${Array.from({ length: 10_000 }, (_, i) => `K${i},${(3.5 + (i % 50) / 100).toFixed(3)},${15 + (i % 9)},${i % 3 ? '3.1' : ''}`).join('\n')}\n`;
	const files: [string, string, number][] = [
		['10,000 rows in default slices', big, 16_384],
		['10,000 rows with a few bad ones', big.replace('K17,', 'K17,x').replace('K9000,', 'K9000,,').replace('K42,', 'K41,'), 16_384],
		['quoted values with separators, quotes and line ends', `${header}\n"A,1",3.6\n"B\n""2""",3.7\n"C3" ,3.8\n\n"D;4","3.9"\n"E\n\n5\n",x\n"F"",\n6",3.5\n"H,8",3.3\n"\nI9",3.2\n"J10" ,3.1\n"\nK11",3.0\n`, 5],
		['semicolons, decimal commas, CRLF', 'label;volts;resistance_mohm\r\nC1;3,612;18,5\r\nC2;3,7;\r\n\r\nC3;x;1\r\n', 3],
		['an unclosed quote', `${header}\nC1,3.6\n"C2,3.6\nC3,3.6\nC4,3.6\n`, 4],
		['a quote inside an unquoted label', `${header}\n6" cell,3.6\n"C2\n",3.7\nC3,3.8\n`, 2],
		['a missing volts column', 'label,ir\nC1,3\nC2,4\n', 1],
		['an empty file', '', 1]
	];

	it.each(files)('%s: same result as parseCellCsv', async (_name, text, sliceChars) => {
		const expected = parseCellCsv(text);
		// Tiny slices cut at nearly every line end outside quotes, which is where slicing can go wrong.
		for (const chars of text.length < 1000 ? [1, 2, 3, 5, 8, 13, sliceChars] : [sliceChars]) {
			const progress: number[] = [];
			const chunked = await parseCellCsvChunked(text, (f) => progress.push(f), { chunkChars: chars });
			expect(chunked, `slices of ${chars} characters`).toEqual(expected);
			expect(progress.at(-1)).toBe(1);
			expect(progress.every((f, i) => f >= 0 && f <= 1 && (i === 0 || f >= progress[i - 1]))).toBe(true);
		}
	});

	it('agrees with parseCellCsv on arbitrary text made of separators, quotes and line ends', async () => {
		const pieces = ['C', '3,6', '3.6', ',', ';', '\t', '"', '""', ' ', '\n', '\r\n', '\r', '\uFEFF', 'x"y', '" ,', '"\t', '\n\n'];
		await fc.assert(
			fc.asyncProperty(
				fc.constantFrom('label,volts\n', 'label;volts\n', 'label\tvolts\n', ''),
				fc.array(fc.constantFrom(...pieces), { maxLength: 60 }),
				fc.integer({ min: 1, max: 40 }),
				async (headerLine, parts, sliceChars) => {
					const text = headerLine + parts.join('');
					expect(await parseCellCsvChunked(text, () => {}, { chunkChars: sliceChars })).toEqual(parseCellCsv(text));
				}
			),
			{ numRuns: 500 }
		);
	});

	it('reports progress between slices of a big file', async () => {
		const progress: number[] = [];
		const result = await parseCellCsvChunked(big, (f) => progress.push(f));
		expect(rowsOf(result)).toHaveLength(10_000);
		expect(progress.filter((f) => f > 0 && f < 1).length).toBeGreaterThan(3);
		expect(progress.at(-1)).toBe(1);
	});

	it('lets other work run while it parses', async () => {
		let ticks = 0;
		const timer = setInterval(() => (ticks += 1), 0);
		await parseCellCsvChunked(big, () => {}, { chunkChars: 4096 });
		clearInterval(timer);
		expect(ticks).toBeGreaterThan(0);
	});
});

describe('cell schemas', () => {
	it('fills unmeasured values with null', () => {
		expect(cellRowSchema.parse({ label: ' C1 ', volts: 3.6 })).toEqual({
			label: 'C1',
			volts: 3.6,
			resistanceMilliOhms: null,
			capacityAh: null
		});
	});

	it.each([
		{ label: '', volts: 3.6 },
		{ label: 'C1', volts: 5.2 },
		{ label: 'C1', volts: Number.NaN },
		{ label: 'C1', volts: 3.6, resistanceMilliOhms: 0 },
		{ label: 'C1', volts: 3.6, capacityAh: 2001 },
		{ label: 'C1', volts: '3.6' }
	])('refuses %j', (row) => {
		expect(cellRowSchema.safeParse(row).success).toBe(false);
	});

	it('refuses an empty batch and duplicate labels in a batch', () => {
		expect(cellBatchSchema.safeParse({ cells: [] }).success).toBe(false);
		const result = cellBatchSchema.safeParse({ cells: [{ label: 'C1', volts: 3.6 }, { label: 'c1', volts: 3.7 }] });
		expect(result.success).toBe(false);
		expect(result.error?.issues[0].path).toEqual(['cells', 1, 'label']);
	});

	it('takes a partial correction, lets null clear a measurement and refuses an empty one', () => {
		expect(cellCorrectionSchema.parse({ capacityAh: null })).toEqual({ capacityAh: null });
		expect(cellCorrectionSchema.parse({ volts: 3.65 })).toEqual({ volts: 3.65 });
		expect(cellCorrectionSchema.safeParse({}).success).toBe(false);
		expect(cellCorrectionSchema.safeParse({ volts: 6 }).success).toBe(false);
	});
});
