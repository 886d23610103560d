/**
 * The plan form's values (strings, as inputs give them) → the engine's `SessionPlanInput`.
 * Wall-clock times are read in the workshop's time zone, never the browser's: the plan screen may
 * be open on a laptop in another zone, and the server reads the same values with the same code.
 * Client-safe.
 */
import { TZDate, tz } from '@date-fns/tz';
import { format } from 'date-fns';
import { parseDecimal } from '$lib/cells-csv-columns';
import type { Limits } from '$lib/engine';
import { isLooser, limitOrder, namesValue, UNDER_BELOW_OVER, type LimitKey } from '$lib/limit-rules';
import type { SessionKind, SessionPlanInput, SessionTarget } from '$lib/session-plan';

/** A daily window, 'HH:MM' wall-clock times ("07:00"–"23:00"; a night watch "22:00"–"07:00"). */
export type DailyRow = { from: string; to: string };
/** A one-off window, 'YYYY-MM-DDTHH:MM' wall-clock times in the workshop's zone. */
export type OnceRow = { start: string; end: string };

export type { LimitKey } from '$lib/limit-rules';

export type PlanFormValues = {
	packId: string;
	name: string;
	kind: SessionKind;
	target: SessionTarget;
	targetVolts: string;
	amps: string;
	chargerId: string;
	channelIds: string[];
	topUpChannelId: string;
	bleedBy: 'ohms' | 'amps';
	bleedValue: string;
	restHours: string;
	swapMinutes: string;
	/** 'YYYY-MM-DDTHH:MM' in the workshop's zone (a datetime-local input). */
	start: string;
	daily: DailyRow[];
	once: OnceRow[];
	readingIntervalMinutes: string;
	watchUserId: string;
	/** Group id → rest volts per cell. */
	startVolts: Record<string, string>;
	/** Limit → the planner's value; empty = the default for this chemistry and set voltage. */
	limits: Partial<Record<LimitKey, string>>;
	limitsConfirmation: string;
};

export type PlanFormErrors = Partial<Record<string, string>>;

const MINUTE_MS = 60_000;
const LOCAL = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})$/;

export type LocalInstant =
	| { ok: true; date: Date; note: null | 'skipped' | 'repeated' }
	| { ok: false; message: string };

function offsetMinutesAt(ms: number, timeZone: string): number {
	return -new TZDate(ms, timeZone).getTimezoneOffset();
}

function wallText(ms: number, timeZone: string): string {
	const d = new TZDate(ms, timeZone);
	const p = (n: number) => String(n).padStart(2, '0');
	return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())}T${p(d.getHours())}:${p(d.getMinutes())}`;
}

/**
 * The instant a wall-clock time 'YYYY-MM-DDTHH:MM' names in the zone. A time the clocks show twice
 * (they go back) is the first of the two; a time they skip (they go forward) is read with the
 * offset from before the change, so 02:30 on a spring-forward night is 03:30 — the moment a clock
 * that was not changed would show 02:30. The note says which happened, so the form can say so.
 */
export function localToInstant(text: string, timeZone: string): LocalInstant {
	const m = LOCAL.exec(text.trim());
	if (!m) return { ok: false, message: 'Give a date and a time.' };
	const [y, mo, d, h, mi] = m.slice(1).map(Number);
	if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59) return { ok: false, message: 'Give a date and a time.' };
	const asUtc = Date.UTC(y, mo - 1, d, h, mi);
	if (new Date(asUtc).getUTCDate() !== d) return { ok: false, message: 'That date does not exist.' };
	// Offsets around the wall time (a change is never more than a few hours from it).
	const offsets = new Set([-26, -3, 0, 3, 26].map((hours) => offsetMinutesAt(asUtc + hours * 60 * MINUTE_MS, timeZone)));
	const wanted = m[0];
	const exact = [...offsets].map((o) => asUtc - o * MINUTE_MS).filter((t) => wallText(t, timeZone) === wanted);
	if (exact.length > 0) {
		const first = Math.min(...exact);
		return { ok: true, date: new Date(first), note: new Set(exact).size > 1 ? 'repeated' : null };
	}
	// Skipped: the offset that held just before the change.
	const before = offsetMinutesAt(asUtc - 26 * 60 * MINUTE_MS, timeZone);
	return { ok: true, date: new Date(asUtc - before * MINUTE_MS), note: 'skipped' };
}

/** 'YYYY-MM-DDTHH:MM' of an instant in the zone (the value of a datetime-local input). */
export function instantToLocal(date: Date, timeZone: string): string {
	return wallText(date.getTime(), timeZone);
}

/** A number as typed ("4,15" or "4.15"); null when empty or not a number. */
export function numberFrom(text: string | null | undefined): number | null {
	if (text === null || text === undefined || text.trim() === '') return null;
	return parseDecimal(text);
}

/** How each limit reads on the form (which way is looser: limitMeta in limit-rules.ts). */
export const limitFields: { key: LimitKey; label: string; unit: string }[] = [
	{ key: 'overVoltsWarning', label: 'Over-voltage watch, per cell', unit: 'V' },
	{ key: 'overVoltsCritical', label: 'Over-voltage act now, per cell', unit: 'V' },
	{ key: 'underVoltsWarning', label: 'Under-voltage, per cell', unit: 'V' },
	{ key: 'tempWarningC', label: 'Temperature watch', unit: '°C' },
	{ key: 'tempCriticalC', label: 'Temperature act now', unit: '°C' },
	{ key: 'minChargeTempC', label: 'No charging below', unit: '°C' },
	{ key: 'heatRiseCPerMinute', label: 'Temperature rise per minute', unit: '°C' },
	{ key: 'heatAboveAmbientC', label: 'Above the room temperature', unit: '°C' },
	{ key: 'driftWarningVolts', label: 'Spread between groups, watch', unit: 'V' },
	{ key: 'driftCriticalVolts', label: 'Spread between groups, act now', unit: 'V' },
	{ key: 'readingGraceMinutes', label: 'A reading is late after', unit: 'min' },
	{ key: 'overrunFactor', label: 'A step overruns past its expected time ×', unit: '' }
];

export type LoosenedLimit = { key: LimitKey; label: string; unit: string; defaultValue: number; value: number };

/** A limit's value as it is written on the form and in a confirmation ("4.25", "50"). */
export function limitText(value: number): string {
	return String(Number(value.toPrecision(6)));
}

/**
 * The limits the session keeps: the defaults with the planner's values over them, and which of
 * them are looser than the default (those need a confirmation that names the datasheet value).
 */
export function mergeLimits(
	defaults: Limits,
	typed: Partial<Record<LimitKey, string>>,
	readingIntervalMinutes: number
): { limits: Limits; overrides: Partial<Limits>; loosened: LoosenedLimit[]; errors: PlanFormErrors } {
	const limits: Limits = { ...defaults, readingIntervalMinutes };
	const overrides: Partial<Limits> = {};
	const loosened: LoosenedLimit[] = [];
	const errors: PlanFormErrors = {};
	for (const f of limitFields) {
		const text = typed[f.key];
		if (text === undefined || text.trim() === '') continue;
		const value = numberFrom(text);
		if (value === null || (f.unit !== '°C' && value <= 0)) {
			errors[`limits.${f.key}`] = f.unit === '°C' ? 'Give a temperature in °C.' : 'Give a number above zero.';
			continue;
		}
		limits[f.key] = value;
		overrides[f.key] = value;
		const def = defaults[f.key];
		if (isLooser(f.key, value, def)) loosened.push({ key: f.key, label: f.label, unit: f.unit, defaultValue: def, value });
	}
	// A watch level past its act-now level would never be seen first (the server refuses it too).
	for (const [watch, actNow, message] of limitOrder) {
		if (limits[watch] > limits[actNow] && !errors[`limits.${watch}`] && !errors[`limits.${actNow}`]) errors[`limits.${watch}`] = message;
	}
	if (limits.underVoltsWarning >= limits.overVoltsWarning && !errors['limits.underVoltsWarning']) {
		errors['limits.underVoltsWarning'] = UNDER_BELOW_OVER;
	}
	return { limits, overrides, loosened, errors };
}

/**
 * True when the confirmation names every loosened value as a number ("4.25" or "4,25"): the
 * planner copies the figure from the cell maker's datasheet, so the text says where it came from.
 */
export function confirmationNamesValues(confirmation: string, loosened: LoosenedLimit[]): boolean {
	if (loosened.length === 0) return true;
	return loosened.every((l) => namesValue(confirmation, l.value));
}

/** The sentence that asks for a confirmation of the loosened limits, naming them and their defaults. */
export function loosenedText(loosened: LoosenedLimit[]): string {
	return loosened
		.map((l) => `${l.label}: ${limitText(l.value)}${l.unit ? ` ${l.unit}` : ''} (the default is ${limitText(l.defaultValue)}${l.unit ? ` ${l.unit}` : ''})`)
		.join('; ');
}

export type PlanFormResult =
	| { ok: true; input: SessionPlanInput; notes: string[] }
	| { ok: false; errors: PlanFormErrors };

const isClock = (t: string) => /^([01]\d|2[0-3]):[0-5]\d$/.test(t);

/**
 * The engine's input from the form. `groupIds` are the pack's groups (each needs a start voltage);
 * errors name the field (`start`, `startVolts.<id>`, `daily.0`, `once.1`, …) in plain words.
 */
export function toPlanInput(values: PlanFormValues, timeZone: string, groupIds: string[]): PlanFormResult {
	const errors: PlanFormErrors = {};
	const notes: string[] = [];
	const start = localToInstant(values.start, timeZone);
	if (!start.ok) errors.start = 'Choose the day and time the session starts.';
	else if (start.note === 'skipped') notes.push(`The clocks go forward that night: ${values.start.slice(11)} does not happen, so the plan starts at ${instantToLocal(start.date, timeZone).slice(11)}.`);
	else if (start.note === 'repeated') notes.push(`The clocks go back that night: ${values.start.slice(11)} happens twice, and the plan starts at the first.`);

	const needsCharger = values.kind !== 'bleed' && values.kind !== 'rest-check';
	if (needsCharger && !values.chargerId) errors.chargerId = 'Choose the charger.';
	const targetVolts = numberFrom(values.targetVolts);
	if (values.target === 'volts' && values.kind !== 'rest-check' && !(targetVolts !== null && targetVolts > 0)) {
		errors.targetVolts = 'Give the voltage per cell.';
	}
	const amps = numberFrom(values.amps);
	if (values.amps.trim() !== '' && !(amps !== null && amps > 0)) errors.amps = 'Give the current in amps, or leave it empty for as much as the charger and the cells allow.';
	const swap = numberFrom(values.swapMinutes);
	if (swap === null || swap < 0 || swap > 240 || !Number.isInteger(swap)) errors.swapMinutes = 'Give whole minutes from 0 to 240.';
	const interval = numberFrom(values.readingIntervalMinutes);
	if (interval === null || !Number.isInteger(interval) || interval < 5 || interval > 720) {
		errors.readingIntervalMinutes = 'Give whole minutes from 5 to 720 (60 is hourly).';
	}
	let bleedLoad: SessionPlanInput['bleedLoad'] = null;
	if (values.kind === 'bleed') {
		const v = numberFrom(values.bleedValue);
		if (!(v !== null && v > 0)) errors.bleedValue = values.bleedBy === 'ohms' ? 'Give the resistor in ohms.' : 'Give the load current in amps.';
		else bleedLoad = values.bleedBy === 'ohms' ? { ohms: v } : { amps: v };
	}
	const restHours = numberFrom(values.restHours);
	if (values.kind === 'rest-check' && !(restHours !== null && restHours > 0)) errors.restHours = 'Say how many hours the pack rests.';

	const startVolts: Record<string, number> = {};
	for (const id of groupIds) {
		const v = numberFrom(values.startVolts[id]);
		if (v === null || v <= 0 || v > 5) errors[`startVolts.${id}`] = 'Give the rest voltage per cell, such as 3.62.';
		else startVolts[id] = v;
	}

	const daily: DailyRow[] = [];
	values.daily.forEach((w, i) => {
		if (!isClock(w.from) || !isClock(w.to)) errors[`daily.${i}`] = 'Write both times as hours and minutes, such as 07:00.';
		else if (w.from === w.to) errors[`daily.${i}`] = 'Give the window an end time after its start.';
		else daily.push({ from: w.from, to: w.to });
	});
	const once: { start: string; end: string }[] = [];
	values.once.forEach((w, i) => {
		const a = localToInstant(w.start, timeZone);
		const b = localToInstant(w.end, timeZone);
		if (!a.ok || !b.ok) errors[`once.${i}`] = 'Give the day and time this window starts and ends.';
		else if (b.date <= a.date) errors[`once.${i}`] = 'The window must end after it starts.';
		else once.push({ start: a.date.toISOString(), end: b.date.toISOString() });
	});

	if (Object.keys(errors).length > 0 || !start.ok) return { ok: false, errors };
	return {
		ok: true,
		notes,
		input: {
			kind: values.kind,
			target: values.target,
			targetVolts: values.target === 'volts' ? targetVolts : null,
			amps,
			chargerId: values.chargerId || null,
			channelIds: values.channelIds,
			topUpChannelId: values.topUpChannelId || null,
			bleedLoad,
			restHours: values.kind === 'rest-check' ? restHours : null,
			swapMinutes: swap as number,
			plannedStart: start.date,
			handsOn: { daily, once },
			startVolts
		}
	};
}

/**
 * A night watch as one tap adds it: a one-off window over the first night of the session, from
 * the evening the daily hours end (or 22:00 without any) to the morning they start again (or 07:00).
 */
export function nightWatchFor(values: Pick<PlanFormValues, 'start' | 'daily'>): OnceRow | null {
	const m = LOCAL.exec(values.start.trim());
	if (!m) return null;
	const day = values.start.slice(0, 10);
	const rows = values.daily.filter((w) => isClock(w.from) && isClock(w.to) && w.to > w.from);
	const evening = rows.length ? rows.map((w) => w.to).sort().at(-1)! : '22:00';
	const morning = rows.length ? rows.map((w) => w.from).sort()[0] : '07:00';
	const next = new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]) + 1)).toISOString().slice(0, 10);
	return { start: `${day}T${evening}`, end: `${next}T${morning}` };
}

/**
 * The body the plan form posts (the fields of `sessionPlanSchema`): instants as ISO text, so the
 * server reads the same moments the browser planned with.
 */
export function toPlanPayload(values: PlanFormValues, input: SessionPlanInput, overrides: Partial<Limits>) {
	return {
		packId: values.packId,
		name: values.name.trim(),
		kind: input.kind,
		target: input.target,
		targetVolts: input.targetVolts ?? null,
		amps: input.amps ?? null,
		chargerId: input.chargerId ?? null,
		channelIds: input.channelIds,
		topUpChannelId: input.topUpChannelId ?? null,
		bleedLoad: input.bleedLoad ?? null,
		restHours: input.restHours ?? null,
		swapMinutes: input.swapMinutes,
		plannedStart: input.plannedStart.toISOString(),
		handsOn: input.handsOn,
		readingIntervalMinutes: numberFrom(values.readingIntervalMinutes) ?? 60,
		limits: overrides,
		limitsConfirmation: values.limitsConfirmation.trim(),
		startVolts: input.startVolts,
		watchUserId: values.watchUserId || null
	};
}

/** Plan times are sums of fractional hours: 06:59:59.998 is shown as the 07:00 it means. */
const toMinute = (date: Date) => new Date(Math.round(date.getTime() / MINUTE_MS) * MINUTE_MS);

/** A plan's time as the bench reads it, in the workshop's zone: "Sat 28 Mar, 08:10". */
export function planWhen(date: Date, timeZone: string): string {
	return format(toMinute(date), 'EEE d MMM, HH:mm', { in: tz(timeZone) });
}

/** The wall-clock time alone, in the workshop's zone: "08:10". */
export function planClock(date: Date, timeZone: string): string {
	return format(toMinute(date), 'HH:mm', { in: tz(timeZone) });
}

/** A saved session's plan fields (as the database row holds them), to fill the edit form. */
export type SavedPlanFields = {
	packId: string;
	name: string;
	kind: SessionKind;
	target: SessionTarget;
	targetVolts: number | null;
	amps: number | null;
	chargerId: string | null;
	channelIds: string[];
	topUpChannelId: string | null;
	bleedLoad: { ohms: number } | { amps: number } | null;
	restHours: number | null;
	swapMinutes: number;
	plannedStart: Date;
	handsOn: { daily: DailyRow[]; once: { start: string; end: string }[] };
	readingIntervalMinutes: number;
	limitsConfirmation: string;
	startVolts: Record<string, number>;
	watchUserId: string | null;
};

const text = (v: number | null | undefined) => (v === null || v === undefined ? '' : String(v));

/** The form's values for a saved plan: instants back to wall-clock text in the workshop's zone. */
export function formValuesFrom(saved: SavedPlanFields, overrides: Partial<Limits>, timeZone: string): PlanFormValues {
	const bleed = saved.bleedLoad;
	return {
		packId: saved.packId,
		name: saved.name,
		kind: saved.kind,
		target: saved.target,
		targetVolts: text(saved.targetVolts),
		amps: text(saved.amps),
		chargerId: saved.chargerId ?? '',
		channelIds: [...saved.channelIds],
		topUpChannelId: saved.topUpChannelId ?? '',
		bleedBy: bleed && 'amps' in bleed ? 'amps' : 'ohms',
		bleedValue: bleed ? text('amps' in bleed ? bleed.amps : bleed.ohms) : '',
		restHours: text(saved.restHours),
		swapMinutes: String(saved.swapMinutes),
		start: instantToLocal(saved.plannedStart, timeZone),
		daily: saved.handsOn.daily.map((w) => ({ from: w.from, to: w.to })),
		once: saved.handsOn.once.map((w) => ({ start: instantToLocal(new Date(w.start), timeZone), end: instantToLocal(new Date(w.end), timeZone) })),
		readingIntervalMinutes: String(saved.readingIntervalMinutes),
		watchUserId: saved.watchUserId ?? '',
		startVolts: Object.fromEntries(Object.entries(saved.startVolts).map(([k, v]) => [k, String(v)])),
		limits: Object.fromEntries(Object.entries(overrides).map(([k, v]) => [k, String(v)])) as Partial<Record<LimitKey, string>>,
		limitsConfirmation: saved.limitsConfirmation
	};
}
