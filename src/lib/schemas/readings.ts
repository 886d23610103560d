/**
 * Readings as they cross a boundary: the run screen (before sending), the JSON API (a person or a
 * data logger), the logger CSV (row by row) and the edit of a stored reading. The ranges mirror
 * the check constraints on the readings table (src/lib/server/db/schema/sessions.ts), so anything
 * that passes here is kept by the database. Client-safe.
 */
import { z } from 'zod';
import { hasControlCharacter, notesText } from './text';

/** The readings table's check constraints, in one place for messages and the CSV reader. */
export const READING_LIMITS = {
	/** A group's reading is volts per cell. */
	groupVoltsMax: 5,
	/** A whole-pack reading is the pack's volts (the database allows up to 2000 V). */
	packVoltsMax: 2000,
	/** Volts per cell times the groups in series: the most a whole-pack reading may be. */
	cellVoltsMax: 5,
	ampsMin: -1000,
	ampsMax: 1000,
	tempMinC: -40,
	tempMaxC: 150,
	ambientMinC: -40,
	ambientMaxC: 80,
	groupIndexMax: 400,
	clientIdMaxChars: 100,
	noteMaxChars: 500,
	/** Readings one request may carry (a logger sends more in several requests). */
	batchMax: 1000,
	/** How far a reading's time may be ahead of the clock that checks it (clocks drift). */
	futureMinutes: 5,
	earliest: '2000-01-01T00:00:00Z'
} as const;

/** ISO 8601 date and time with seconds optional, fractions optional, and an offset or Z (required). */
const isoWithOffset = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(?::\d{2}(?:\.\d{1,9})?)?(?:Z|[+-]\d{2}:?\d{2})$/i;

/** ms since 1970, or NaN when the text is not an ISO 8601 time with an offset. */
export function parseIsoWithOffset(text: string): number {
	if (!isoWithOffset.test(text)) return Number.NaN;
	// Date.parse wants the colon in the offset; "+0100" → "+01:00". More than 3 fraction digits are cut.
	const normal = text
		.replace(/([+-]\d{2})(\d{2})$/, '$1:$2')
		.replace(/(\.\d{3})\d+/, '$1')
		.toUpperCase();
	return Date.parse(normal);
}

/** A problem with a reading time in words, or null when it is fine (`now` in ms). */
export function takenAtProblem(ms: number, now = Date.now()): string | null {
	if (Number.isNaN(ms)) return 'Give the time as ISO 8601 with an offset, such as 2026-03-14T21:30:00+01:00 or 2026-03-14T20:30:00Z.';
	if (ms < Date.parse(READING_LIMITS.earliest)) return 'The time is before the year 2000: check the logger’s clock.';
	if (ms > now + READING_LIMITS.futureMinutes * 60_000)
		return `The time is more than ${READING_LIMITS.futureMinutes} minutes in the future: check the clock of the device that took it.`;
	return null;
}

const takenAt = z
	.string({ error: 'Give the time the reading was taken (takenAt).' })
	.superRefine((value, ctx) => {
		const problem = takenAtProblem(parseIsoWithOffset(value));
		if (problem) ctx.addIssue({ code: 'custom', message: problem });
	})
	// One spelling for every time: what the database and the clientId derived from it see.
	.transform((value) => new Date(parseIsoWithOffset(value)).toISOString());

const measured = (what: string, min: number, max: number, unit: string) =>
	z
		.number({ error: `${what} must be a number of ${unit}.` })
		.min(min, `${what} must be between ${min} and ${max} ${unit}.`)
		.max(max, `${what} must be between ${min} and ${max} ${unit}.`)
		.nullable();

const volts = measured('Volts', 0, READING_LIMITS.packVoltsMax, 'volts');
const amps = measured('Amps', READING_LIMITS.ampsMin, READING_LIMITS.ampsMax, 'amps');
const tempC = measured('Cell temperature', READING_LIMITS.tempMinC, READING_LIMITS.tempMaxC, '°C');
const ambientC = measured('Room temperature', READING_LIMITS.ambientMinC, READING_LIMITS.ambientMaxC, '°C');
const note = notesText(READING_LIMITS.noteMaxChars, { tooLong: `Keep the note to ${READING_LIMITS.noteMaxChars} characters.` });

/** Made by the sender, unique per session: a repeat with the same id is stored once. Not trimmed: it is an identity. */
export const clientIdSchema = z
	.string({ error: 'Give each reading a clientId (the sender’s own id for it).' })
	.min(1, 'Give each reading a clientId (the sender’s own id for it).')
	.max(READING_LIMITS.clientIdMaxChars, `A clientId has at most ${READING_LIMITS.clientIdMaxChars} characters.`)
	.refine((v) => !hasControlCharacter(v), 'A clientId holds letters, digits and punctuation only (no control characters).');

const groupIndex = z
	.number({ error: 'groupIndex must be a group number, or null for the whole pack.' })
	.int('groupIndex must be a whole number.')
	.min(1, `groupIndex must be between 1 and ${READING_LIMITS.groupIndexMax}, or null for the whole pack.`)
	.max(READING_LIMITS.groupIndexMax, `groupIndex must be between 1 and ${READING_LIMITS.groupIndexMax}, or null for the whole pack.`)
	.nullable();

type Measured = { volts?: number | null; amps?: number | null; tempC?: number | null; ambientC?: number | null };
const hasMeasurement = (r: Measured) => [r.volts, r.amps, r.tempC, r.ambientC].some((v) => v !== undefined && v !== null);

/** One reading: a group (volts per cell) or the whole pack (groupIndex null: the pack's volts). */
export const readingInputSchema = z
	.object({
		clientId: clientIdSchema,
		groupIndex,
		takenAt,
		volts: volts.optional(),
		amps: amps.optional(),
		tempC: tempC.optional(),
		ambientC: ambientC.optional(),
		note: note.optional()
	})
	.superRefine((r, ctx) => {
		if (!hasMeasurement(r))
			ctx.addIssue({ code: 'custom', path: ['volts'], message: 'A reading needs at least one value: volts, amps, cell or room temperature.' });
		if (r.groupIndex !== null && r.volts != null && r.volts > READING_LIMITS.groupVoltsMax)
			ctx.addIssue({
				code: 'custom',
				path: ['volts'],
				message: `A group's reading is volts per cell, at most ${READING_LIMITS.groupVoltsMax} V. For the whole pack's volts send groupIndex null.`
			});
	});

export type ReadingInput = z.output<typeof readingInputSchema>;
/** What a sender writes (takenAt as any ISO 8601 time with an offset). */
export type ReadingInputDraft = z.input<typeof readingInputSchema>;

/** A batch of readings in one request: all are stored, or none. */
export const readingBatchSchema = z.object({
	readings: z
		.array(readingInputSchema, { error: 'Send the readings as a list: { "readings": [ … ] }.' })
		.min(1, 'Send at least one reading.')
		.max(READING_LIMITS.batchMax, `Send at most ${READING_LIMITS.batchMax} readings at a time; send more in further requests.`)
});

/**
 * An edit of a stored reading: only the keys sent change (no defaults, so a left-out key is never
 * filled in). Null clears a value; at least one measured value must remain (checked on the server
 * against the stored row).
 */
export const readingPatchSchema = z
	.object({
		takenAt,
		volts,
		amps,
		tempC,
		ambientC,
		note
	})
	.partial()
	.strict()
	.refine((p) => Object.keys(p).length > 0, 'Send at least one field to change.');

export type ReadingPatch = z.output<typeof readingPatchSchema>;

/** The query of GET …/readings: readings taken at or after `since`, the newest `limit` of them. */
export const readingListQuerySchema = z.object({
	since: z
		.string()
		.refine((v) => !Number.isNaN(parseIsoWithOffset(v)), 'since must be an ISO 8601 time with an offset.')
		.transform((v) => new Date(parseIsoWithOffset(v)))
		.optional(),
	limit: z.coerce.number().int('limit must be a whole number.').min(1).max(10_000, 'limit is at most 10000.').optional()
});

/** A device token's name as the builder gives it ("Bench logger 1"). */
export const deviceTokenInputSchema = z.object({
	name: z
		.string({ error: 'Name the device.' })
		.refine((v) => !hasControlCharacter(v), 'Use letters, digits and punctuation only (no control characters).')
		.transform((v) => v.trim())
		.pipe(z.string().min(1, 'Name the device.').max(60, 'Use at most 60 characters for the name.'))
});
