/**
 * A round of self-discharge checks as posted by the form: one volts field per cell (or group),
 * paired with its id; empty fields are cells not measured this time.
 */
import { z } from 'zod';
import { CELL_LIMITS, CELL_BATCH_MAX_CELLS } from './cells';

/** Volts at rest per cell: the range of voltage_checks_volts (and of a cell's arrival volts). */
export const checkVolts = z
	.number({ error: 'Volts must be a number.' })
	.min(CELL_LIMITS.voltsMin, `Volts must be between ${CELL_LIMITS.voltsMin} and ${CELL_LIMITS.voltsMax}.`)
	.max(CELL_LIMITS.voltsMax, `Volts must be between ${CELL_LIMITS.voltsMin} and ${CELL_LIMITS.voltsMax}.`);

export const voltageCheckFormSchema = z.object({
	/** 'YYYY-MM-DDTHH:MM' in the workshop's zone; empty = now. */
	measuredAt: z.string().max(40, 'Give a date and a time.'),
	entries: z
		.array(z.object({ target: z.string().min(1).max(40), volts: z.string().max(20, 'A volts field is too long.') }))
		.max(CELL_BATCH_MAX_CELLS, 'Too many fields in one round.')
});
export type VoltageCheckForm = z.infer<typeof voltageCheckFormSchema>;
