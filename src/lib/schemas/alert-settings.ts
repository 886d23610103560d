/**
 * A member's alert settings in one workshop (channels, quiet time), the session's watchers, and
 * the workshop's escalation time. Client-safe: the settings page and the API read the same rules.
 */
import { z } from 'zod';
import { hasControlCharacter } from './text';

/** 'HH:MM', 24-hour, as the database's check on memberships.quiet_from / quiet_to. */
export const CLOCK_PATTERN = /^([01][0-9]|2[0-3]):[0-5][0-9]$/;

const clockMessage = 'Write the time as HH:MM, 24-hour (for example 22:00).';

/** A time of day 'HH:MM'; control characters are refused with their own message. */
const clock = z
	.string(clockMessage)
	.refine((v) => !hasControlCharacter(v), 'Use digits and a colon only (no control characters).')
	.transform((v) => v.trim())
	.pipe(z.string().regex(CLOCK_PATTERN, clockMessage));

const bothOrNeither = 'Give both the start and the end of the quiet time, or neither.';
const sameTimes = 'The quiet time must start and end at different times.';

type Quiet = { quietFrom?: string | null; quietTo?: string | null };

/** Quiet time is a pair: both set and different, or both empty. */
function checkQuietPair(v: Quiet, ctx: z.RefinementCtx, emptyMeansUnset: boolean) {
	const given = (x: string | null | undefined) => (emptyMeansUnset ? x !== undefined && x !== null && x !== '' : x !== undefined);
	const from = given(v.quietFrom);
	const to = given(v.quietTo);
	if (from !== to) {
		ctx.addIssue({ code: 'custom', path: [from ? 'quietTo' : 'quietFrom'], message: bothOrNeither });
		return;
	}
	if ((v.quietFrom === null) !== (v.quietTo === null)) {
		ctx.addIssue({ code: 'custom', path: [v.quietFrom === null ? 'quietFrom' : 'quietTo'], message: bothOrNeither });
		return;
	}
	if (from && v.quietFrom && v.quietFrom === v.quietTo) ctx.addIssue({ code: 'custom', path: ['quietTo'], message: sameTimes });
}

/**
 * The JSON API's PATCH body: only the keys sent change. Quiet time goes as a pair (both times,
 * or both null to turn it off). No defaults, so a missing key stays missing.
 */
export const alertSettingsPatchSchema = z
	.object({
		emailAlerts: z.boolean('Say true or false for e-mail alerts.').optional(),
		pushAlerts: z.boolean('Say true or false for push alerts.').optional(),
		quietFrom: clock.nullable().optional(),
		quietTo: clock.nullable().optional()
	})
	.strict()
	.superRefine((v, ctx) => checkQuietPair(v, ctx, false));
export type AlertSettingsPatch = z.output<typeof alertSettingsPatchSchema>;

/** An empty form field means "no quiet time". */
const formClock = z.union([z.literal(''), clock]);

/** The settings page's form: every field is on the page, so every field is sent. */
export const alertSettingsFormSchema = z
	.object({
		emailAlerts: z.boolean(),
		pushAlerts: z.boolean(),
		quietFrom: formClock,
		quietTo: formClock
	})
	.superRefine((v, ctx) => checkQuietPair(v, ctx, true));

export type AlertSettings = { emailAlerts: boolean; pushAlerts: boolean; quietFrom: string | null; quietTo: string | null };

/** The form's values as settings ('' → no quiet time). */
export function settingsFromForm(v: z.output<typeof alertSettingsFormSchema>): AlertSettings {
	return { emailAlerts: v.emailAlerts, pushAlerts: v.pushAlerts, quietFrom: v.quietFrom || null, quietTo: v.quietTo || null };
}

/** Minutes a critical alert may stay unacknowledged before it goes to every owner (the database checks the same). */
export const ESCALATION_MINUTES = { min: 1, max: 240, default: 10 } as const;

const escalationMessage = `Give a whole number of minutes from ${ESCALATION_MINUTES.min} to ${ESCALATION_MINUTES.max}.`;

export const escalationSchema = z.object({
	// A refine, not .int(): superforms reads an integer field with parseInt, which would take 15.5 as 15.
	escalationMinutes: z
		.number(escalationMessage)
		.refine(Number.isInteger, escalationMessage)
		.min(ESCALATION_MINUTES.min, escalationMessage)
		.max(ESCALATION_MINUTES.max, escalationMessage)
});

/** Add or take off a watcher: `{ userId, watching }`. */
export const watcherChangeSchema = z
	.object({
		userId: z.string('Choose a member.').min(1, 'Choose a member.').max(100, 'Choose a member.'),
		watching: z.boolean('Say true to add the member, false to take them off.')
	})
	.strict();
