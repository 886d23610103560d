/** What the alerts inbox and an acknowledgement accept (form action and JSON API alike). */
import { z } from 'zod';
import { notesText } from './text';

export const ALERT_NOTE_MAX = 500;

/** An acknowledgement: an optional note (line breaks allowed, no other control characters). */
export const alertAckSchema = z.object({
	note: notesText(ALERT_NOTE_MAX, { tooLong: `Use at most ${ALERT_NOTE_MAX} characters for the note.` }).optional()
});

export const alertListStatuses = ['open', 'acknowledged', 'all'] as const;

const ID = /^[a-z2-7]{24}$/;

/** The list's query string: which alerts, of one session, how many, opened before when. */
export const alertListQuerySchema = z.object({
	status: z.enum(alertListStatuses, 'Status is one of: open, acknowledged, all.').optional(),
	sessionId: z.string().regex(ID, 'The session id is not valid.').optional(),
	limit: z.coerce
		.number('The limit is a whole number from 1 to 200.')
		.int('The limit is a whole number from 1 to 200.')
		.min(1, 'The limit is a whole number from 1 to 200.')
		.max(200, 'The limit is a whole number from 1 to 200.')
		.optional(),
	before: z.iso
		.datetime({ offset: true, error: 'Give “before” as an ISO time, e.g. 2026-03-01T02:00:00Z.' })
		.transform((v) => new Date(v))
		.optional()
});
export type AlertListQuery = z.output<typeof alertListQuerySchema>;
