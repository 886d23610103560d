import { z } from 'zod';
import { lineText } from './text';

/**
 * Ranges of one arrival measurement. They mirror the check constraints on the cells table, so
 * anything that passes here is accepted by the database.
 */
export const CELL_LIMITS = {
	labelMaxChars: 60,
	voltsMin: 0,
	voltsMax: 5,
	resistanceMaxMilliOhms: 10_000,
	capacityMaxAh: 2_000
} as const;

/**
 * The key under which two labels count as the same cell. Case-insensitive: "C1" and "c1" on one
 * bench are almost always the same cell typed twice.
 */
export function cellLabelKey(label: string): string {
	return label.trim().toLowerCase();
}

/** Most cells one upload or one batch request may carry. */
export const CELL_BATCH_MAX_CELLS = 20_000;

const label = lineText(CELL_LIMITS.labelMaxChars, {
	required: 'Give the cell a label.',
	tooLong: `Use at most ${CELL_LIMITS.labelMaxChars} characters for a label.`
});

const volts = z
	.number({ error: 'Volts must be a number.' })
	.min(CELL_LIMITS.voltsMin, `Volts must be between ${CELL_LIMITS.voltsMin} and ${CELL_LIMITS.voltsMax}.`)
	.max(CELL_LIMITS.voltsMax, `Volts must be between ${CELL_LIMITS.voltsMin} and ${CELL_LIMITS.voltsMax}.`);

const resistanceMilliOhms = z
	.number({ error: 'Resistance must be a number of milliohms.' })
	.gt(0, 'Resistance must be above 0 mΩ.')
	.max(CELL_LIMITS.resistanceMaxMilliOhms, `Resistance must be at most ${CELL_LIMITS.resistanceMaxMilliOhms} mΩ.`)
	.nullable();

const capacityAh = z
	.number({ error: 'Capacity must be a number of amp-hours.' })
	.gt(0, 'Capacity must be above 0 Ah.')
	.max(CELL_LIMITS.capacityMaxAh, `Capacity must be at most ${CELL_LIMITS.capacityMaxAh} Ah.`)
	.nullable();

/** One cell's arrival measurement as the JSON API receives it; an unmeasured value is null (or left out). */
export const cellRowSchema = z.object({
	label,
	volts,
	resistanceMilliOhms: resistanceMilliOhms.default(null),
	capacityAh: capacityAh.default(null)
});

export type CellRow = z.output<typeof cellRowSchema>;

/** A batch of new cells for one pack: all are imported or none, so labels must differ within it. */
export const cellBatchSchema = z
	.object({
		cells: z
			.array(cellRowSchema)
			.min(1, 'Send at least one cell.')
			.max(CELL_BATCH_MAX_CELLS, `Send at most ${CELL_BATCH_MAX_CELLS} cells at a time.`)
	})
	.superRefine(({ cells }, ctx) => {
		const firstIndex = new Map<string, number>();
		cells.forEach((cell, index) => {
			const key = cellLabelKey(cell.label);
			const first = firstIndex.get(key);
			if (first === undefined) firstIndex.set(key, index);
			else
				ctx.addIssue({
					code: 'custom',
					path: ['cells', index, 'label'],
					message: `The label "${cell.label}" is also used by cell ${first + 1}; each cell needs its own label.`
				});
		});
	});

export type CellBatch = z.output<typeof cellBatchSchema>;

/** An inline correction of one cell: only the fields sent change; null clears an optional measurement. */
export const cellCorrectionSchema = z
	.object({
		label: label.optional(),
		volts: volts.optional(),
		resistanceMilliOhms: resistanceMilliOhms.optional(),
		capacityAh: capacityAh.optional()
	})
	.refine((c) => Object.values(c).some((v) => v !== undefined), 'Change at least one measurement.');

export type CellCorrection = z.output<typeof cellCorrectionSchema>;

/** A cell's id as a form posts it. */
const cellId = z.string('Choose a cell.').regex(/^[a-z2-7]{24}$/, 'That cell is not in this batch; reload the page.');

/** A field as typed in a form: text, parsed into a number on the server. */
const typed = z.string('Each field must be text.').max(200, 'A field is far too long.').optional();

/**
 * The add-cells form posts its rows as one JSON text: a list of entries with each field as typed.
 * Anything else (an object, numbers, nulls) is refused here, before any row is read.
 */
export const cellEntryFormSchema = z.object({
	rows: z
		.string('The entries could not be read. Try again.')
		.transform((text, ctx) => {
			try {
				return JSON.parse(text) as unknown;
			} catch {
				ctx.addIssue({ code: 'custom', message: 'The entries could not be read. Try again.' });
				return z.NEVER;
			}
		})
		.pipe(
			z
				.array(
					z.object(
						{ label: typed, volts: typed, resistanceMilliOhms: typed, capacityAh: typed },
						'The entries could not be read. Try again.'
					),
					'The entries could not be read. Try again.'
				)
				.max(CELL_BATCH_MAX_CELLS, `Send at most ${CELL_BATCH_MAX_CELLS} cells at a time.`)
		)
});

/** The inline edit of one cell as its form posts it (numbers still as typed). */
export const cellEditFormSchema = z.object({
	cellId,
	label: typed,
	volts: typed,
	resistanceMilliOhms: typed,
	capacityAh: typed
});

export const cellIdFormSchema = z.object({ cellId });

export const cellCsvFormSchema = z.object({ csv: z.string('Choose a CSV file.') });
