/**
 * What crosses the boundary for charge sessions: the plan form (and POST /api/…/sessions), its
 * PATCH, the run screen's actions (status, steps, watch hand-over). Client-safe. The ranges are
 * the database's checks (src/lib/server/db/schema/sessions.ts), never looser.
 *
 * Planned start: either an ISO 8601 instant with its offset ("2026-03-28T21:00:00+01:00" or
 * "…Z"), taken as that instant, or a local date-time without offset ("2026-03-28T21:00", what a
 * datetime-local field sends), read as a wall time in the workshop's time zone (never the
 * browser's or the server's) by `plannedStartInstant`.
 */
import { TZDate } from '@date-fns/tz';
import { z } from 'zod';
import type { Limits } from '$lib/engine';
import { sessionKinds, sessionTargets } from '$lib/session-plan';
import { recordId } from './packs';
import { lineText } from './text';
import { isLooser, limitMeta, limitOrder, namesValue, UNDER_BELOW_OVER } from '$lib/limit-rules';

export { limitMeta };

const number = (what: string) => z.number(`${what} must be a number.`);
const between = (what: string, min: number, max: number, unit = '') =>
	number(what)
		.min(min, `${what} must be at least ${min}${unit}.`)
		.max(max, `${what} must be at most ${max}${unit}.`);
const above = (what: string, max: number, unit = '') =>
	number(what)
		.gt(0, `${what} must be more than 0${unit}.`)
		.max(max, `${what} must be at most ${max}${unit}.`);
const whole = (what: string, min: number, max: number, unit = '') =>
	between(what, min, max, unit).int(`${what} must be a whole number.`);

const HH_MM = /^([01]\d|2[0-3]):([0-5]\d)$/;
const hhmm = z.string().regex(HH_MM, 'Write each time as hours and minutes, 00:00 to 23:59 (e.g. 07:00).');

const ISO_WITH_OFFSET = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d{1,3})?)?(Z|[+-]\d{2}:\d{2})$/;
const LOCAL_DATE_TIME = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(:(\d{2}))?$/;

const instant = (message: string) =>
	z.string().refine((v) => ISO_WITH_OFFSET.test(v) && Number.isFinite(Date.parse(v)), message);

/** A planned start as sent: an instant with offset, or a local date-time in the workshop's zone. */
const plannedStartText = z
	.string('Choose when the session starts.')
	.refine(
		(v) => (ISO_WITH_OFFSET.test(v) && Number.isFinite(Date.parse(v))) || LOCAL_DATE_TIME.test(v),
		'Give the start as a date and time (e.g. 2026-03-28T21:00).'
	);

/**
 * The instant of a planned start: an ISO instant with offset as it is; a local date-time as the
 * wall time in `timeZone`. A wall time that never happens (clocks go forward) moves on by the
 * gap; one that happens twice (clocks go back) is the later of the two, as a hands-on window's
 * start is read (src/lib/hands-on.ts). Null when unreadable (31 February, 24:00).
 */
export function plannedStartInstant(value: string, timeZone: string): Date | null {
	if (ISO_WITH_OFFSET.test(value)) {
		const ms = Date.parse(value);
		return Number.isFinite(ms) ? new Date(ms) : null;
	}
	const m = LOCAL_DATE_TIME.exec(value);
	if (!m) return null;
	const [y, mo, d, h, mi, sec] = [m[1], m[2], m[3], m[4], m[5], m[7] ?? '0'].map(Number);
	if (mo < 1 || mo > 12 || h > 23 || mi > 59 || sec > 59) return null;
	const asUtc = Date.UTC(y, mo - 1, d, h, mi, sec);
	if (new Date(asUtc).getUTCDate() !== d) return null; // 31 February
	// The zone's offsets around that wall time (two near a change), and the instants they give;
	// the machine's own zone plays no part.
	const offsets = new Set([-3, 0, 3].map((k) => -new TZDate(asUtc + k * 3_600_000, timeZone).getTimezoneOffset()));
	const candidates = [...offsets].map((o) => asUtc - o * 60_000);
	const exact = candidates.filter((t) => {
		const w = new TZDate(t, timeZone);
		return w.getFullYear() === y && w.getMonth() === mo - 1 && w.getDate() === d && w.getHours() === h && w.getMinutes() === mi;
	});
	// Twice: the later instant. Never: the offset before the change, i.e. on by the gap — also the later.
	const ms = Math.max(...(exact.length ? exact : candidates));
	return Number.isFinite(ms) ? new Date(ms) : null;
}

/**
 * Limits the planner may change from the chemistry's defaults (the engine's `Limits`, except the
 * reading interval, which is the session's own field). Tightening is free; loosening one past its
 * default needs `limitsConfirmation` to name the datasheet value (checked on the server).
 */
export const limitOverridesSchema = z
	.object({
		overVoltsWarning: between('The over-voltage watch limit', 1, 5, ' V'),
		overVoltsCritical: between('The over-voltage act-now limit', 1, 5, ' V'),
		underVoltsWarning: between('The under-voltage limit', 0.5, 5, ' V'),
		tempWarningC: between('The temperature watch limit', -40, 150, ' °C'),
		tempCriticalC: between('The temperature act-now limit', -40, 150, ' °C'),
		minChargeTempC: between('The lowest charging temperature', -40, 60, ' °C'),
		heatRiseCPerMinute: above('The temperature rise limit', 20, ' °C per minute'),
		heatAboveAmbientC: above('The limit above room temperature', 100, ' °C'),
		driftWarningVolts: above('The group spread watch limit', 1, ' V'),
		driftCriticalVolts: above('The group spread act-now limit', 1, ' V'),
		readingGraceMinutes: whole('The grace for a late reading', 0, 240, ' minutes'),
		overrunFactor: between('The overrun factor', 1, 10)
	})
	.partial()
	.strict();
export type LimitOverrides = z.output<typeof limitOverridesSchema>;
export type LimitKey = keyof LimitOverrides;

const round3 = (v: number) => String(Math.round(v * 1000) / 1000);

export type LimitProblem = { key: LimitKey; message: string };

/**
 * What is wrong with the planner's limits against the chemistry's defaults, in words (empty when
 * nothing): a limit loosened past its default without the confirmation naming the datasheet
 * value, or a watch level past its act-now level. Client-safe: the plan form shows the same words
 * the server refuses with.
 */
export function limitProblems(defaults: Limits, overrides: LimitOverrides, confirmation: string): LimitProblem[] {
	const problems: LimitProblem[] = [];
	for (const key of Object.keys(overrides) as LimitKey[]) {
		const value = overrides[key];
		if (value === undefined || !(key in limitMeta)) continue;
		const meta = limitMeta[key];
		const usual = defaults[key];
		if (isLooser(key, value, usual) && !namesValue(confirmation, value)) {
			const v = `${round3(value)} ${meta.unit}`;
			problems.push({
				key,
				message: `The ${meta.words} of ${v} is looser than this chemistry's default of ${round3(usual)} ${meta.unit}. Check the cell maker's datasheet: if it allows ${v}, say so in the confirmation (for example “datasheet allows ${v}”); otherwise keep the default.`
			});
		}
	}
	const merged = { ...defaults, ...overrides };
	for (const [warning, stop, message] of limitOrder) if (merged[warning] > merged[stop]) problems.push({ key: warning, message });
	if (merged.underVoltsWarning >= merged.overVoltsWarning) problems.push({ key: 'underVoltsWarning', message: UNDER_BELOW_OVER });
	return problems;
}

const handsOnSchema = z.object({
	/** Daily windows, wall-clock in the workshop's zone; `to` at or before `from` runs past midnight. */
	daily: z
		.array(z.object({ from: hhmm, to: hhmm }).refine((w) => w.from !== w.to, 'A window needs an end time after its start.'))
		.max(12, 'At most 12 daily windows.'),
	/** One-off windows (a night watch on one date), instants with offset. */
	once: z
		.array(
			z
				.object({
					start: instant('Give the window’s start as a date and time with its offset.'),
					end: instant('Give the window’s end as a date and time with its offset.')
				})
				.refine((w) => Date.parse(w.end) > Date.parse(w.start), 'Each one-off window needs a start before its end.')
		)
		.max(60, 'At most 60 one-off windows.')
});
export type HandsOnFields = z.output<typeof handsOnSchema>;

const bleedLoadSchema = z.union(
	[z.object({ ohms: above('The resistor', 100000, ' Ω') }).strict(), z.object({ amps: above('The load current', 1000, ' A') }).strict()],
	'Give the bleed resistor in ohms or the load current in amps.'
);

/** Fields of a plan without defaults (the PATCH takes any subset of them). */
const planFields = {
	name: lineText(80),
	kind: z.enum(sessionKinds, 'Choose the kind of session.'),
	target: z.enum(sessionTargets, 'Choose what to charge to: full, storage or a set voltage.'),
	/** Volts per cell for target 'volts'. */
	targetVolts: between('The target voltage', 1, 5, ' V').nullable(),
	/** Requested amps per step. */
	amps: above('The current', 1000, ' A').nullable(),
	chargerId: recordId('Choose a charger of this workshop.').nullable(),
	channelIds: z.array(recordId('Choose channels of the charger.')).max(16, 'At most 16 channels.'),
	topUpChannelId: recordId('Choose the channel for the top-up.').nullable(),
	bleedLoad: bleedLoadSchema.nullable(),
	restHours: above('The rest time', 2160, ' hours').nullable(),
	swapMinutes: whole('The time to swap leads', 0, 240, ' minutes'),
	plannedStart: plannedStartText,
	handsOn: handsOnSchema,
	readingIntervalMinutes: whole('The reading interval', 5, 720, ' minutes'),
	limits: limitOverridesSchema,
	/** The datasheet value(s) that allow a loosened limit, in the planner's words. */
	limitsConfirmation: lineText(300),
	/** Group id → rest volts per cell; a group left out starts from its last reading (or arrival volts). */
	startVolts: z.record(recordId('A group id is not valid; reload the page.'), between('A start voltage', 0, 5, ' V')),
	/** The member on watch (owner, builder or technician); null = the planner. */
	watchUserId: z.string().min(1).max(100).nullable(),
	/** Save as a draft (not yet planned: nobody can start it). */
	draft: z.boolean()
};

/** The plan form: a new session. What is left out takes its default. */
export const sessionPlanSchema = z
	.object({
		packId: recordId('Choose a pack.'),
		...planFields,
		name: planFields.name.default(''),
		target: planFields.target.default('full'),
		targetVolts: planFields.targetVolts.default(null),
		amps: planFields.amps.default(null),
		chargerId: planFields.chargerId.default(null),
		channelIds: planFields.channelIds.default([]),
		topUpChannelId: planFields.topUpChannelId.default(null),
		bleedLoad: planFields.bleedLoad.default(null),
		restHours: planFields.restHours.default(null),
		swapMinutes: planFields.swapMinutes.default(5),
		handsOn: handsOnSchema.default({ daily: [], once: [] }),
		readingIntervalMinutes: planFields.readingIntervalMinutes.default(60),
		limits: limitOverridesSchema.default({}),
		limitsConfirmation: planFields.limitsConfirmation.default(''),
		startVolts: planFields.startVolts.default({}),
		watchUserId: planFields.watchUserId.default(null),
		draft: planFields.draft.default(false)
	})
	.refine((v) => v.target !== 'volts' || v.targetVolts !== null, {
		message: 'Give the target voltage per cell.',
		path: ['targetVolts']
	});
export type SessionPlanFields = z.output<typeof sessionPlanSchema>;

/**
 * PATCH of a draft or planned session: only the keys sent change (no defaults here — zod's
 * `.partial()` would fill them in). `limits` replaces the overrides as a whole; `startVolts`
 * merges into the saved ones. `draft: false` makes a draft a planned session.
 */
export const sessionPatchSchema = z.object(planFields).partial().strict();
export type SessionPatch = z.output<typeof sessionPatchSchema>;

/** Stopping a session: the reason is required and kept. */
export const stopSchema = z.object({
	reason: lineText(500, { required: 'Say why the session stops.' })
});

/** Handing the watch to another member. */
export const handoverSchema = z.object({
	userId: z.string('Choose who takes the watch.').min(1, 'Choose who takes the watch.').max(100)
});

export const stepActions = ['start', 'done', 'skip'] as const;
export const stepActionSchema = z.object({
	action: z.enum(stepActions, 'Say what to do with the step: start, done or skip.')
});

export const statusActions = ['start', 'pause', 'resume', 'stop', 'finish'] as const;
/** The session's state changes; a stop needs its reason. */
export const statusActionSchema = z
	.object({
		action: z.enum(statusActions, 'Say what to do: start, pause, resume, stop or finish.'),
		reason: lineText(500).optional()
	})
	.refine((v) => v.action !== 'stop' || (v.reason !== undefined && v.reason.length > 0), {
		message: 'Say why the session stops.',
		path: ['reason']
	});
export type StatusAction = z.output<typeof statusActionSchema>;
