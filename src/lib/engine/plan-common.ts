import { resolveChemistry, familyOf, type Chemistry, type ChemistryId } from './chemistry';
import { chargeAmps, chargeModel, checkSetVolts, checkStart, runCharge, type Channel, type ChargeEstimate } from './charge';
import { fail, isNonNegative, isPositive, MS_PER_HOUR, MS_PER_MINUTE, timeOf, type Failure } from './types';

/** Single-cell charger designs stop after 10 h — TI SLUAAG9; a longer step deserves a second look. */
export const SAFETY_TIMER_HOURS = 10;

export interface PlanGroup {
	id: string;
	/** Group capacity (P × cell capacity). */
	capacityAh: number;
	startSoc?: number;
	/** Rest voltage per cell. */
	startVolts?: number;
	/** The group's charge rating; default the chemistry's defaultChargeC × capacityAh. */
	maxChargeAmps?: number;
	/** Group resistance (cell resistance / P). */
	resistanceOhms?: number;
}

export interface HandsOnWindow {
	start: Date;
	end: Date;
}

export interface PlanInputBase {
	chemistry: ChemistryId | Chemistry;
	groups: PlanGroup[];
	/** Set voltage per cell. */
	setVolts: number;
	start: Date;
	/** Requested charge amps per group (capped by channel and group rating). */
	amps?: number;
	terminationAmps?: number;
	/** Minutes a person needs to swap leads between steps on one channel; default 0. */
	swapMinutes?: number;
	/** When someone is there to swap leads; absent = always. */
	handsOn?: HandsOnWindow[];
}

export interface PlanStep {
	groupId: string;
	channelId: string;
	start: Date;
	end: Date;
	preHours: number;
	ccHours: number;
	cvHours: number;
	ahIn: number;
	/** Hours the group sits held at the set voltage after its step ends, until someone is back. */
	unattendedHoldHours: number;
	/** Hours of the step itself that run with nobody there. */
	unattendedChargeHours: number;
}

export interface PlanWarning {
	code: string;
	message: string;
	groupId?: string;
}

export interface Plan {
	steps: PlanStep[];
	end: Date;
	totalHours: number;
	warnings: PlanWarning[];
}

/** Times when someone is present, as merged [start, end) millisecond windows; null = always. */
export class Presence {
	private readonly windows: [number, number][] | null;

	constructor(windows: [number, number][] | null) {
		this.windows = windows;
	}

	/** Index of the window containing t, or −1. */
	private indexAt(t: number): number {
		const w = this.windows as [number, number][];
		let lo = 0;
		let hi = w.length - 1;
		while (lo <= hi) {
			const mid = (lo + hi) >> 1;
			if (w[mid][1] <= t) lo = mid + 1;
			else if (w[mid][0] > t) hi = mid - 1;
			else return mid;
		}
		return -1;
	}

	isPresent(t: number): boolean {
		return this.windows === null || this.indexAt(t) >= 0;
	}

	/** Index of the first window ending after t (windows are sorted and disjoint). */
	private firstEndingAfter(t: number): number {
		const w = this.windows as [number, number][];
		let lo = 0;
		let hi = w.length;
		while (lo < hi) {
			const mid = (lo + hi) >> 1;
			if (w[mid][1] <= t) lo = mid + 1;
			else hi = mid;
		}
		return lo;
	}

	/** Start of the first window beginning after t, or null. */
	nextStartAfter(t: number): number | null {
		if (this.windows === null) return t;
		const w = this.windows;
		for (let i = this.firstEndingAfter(t); i < w.length; i++) if (w[i][0] > t) return w[i][0];
		return null;
	}

	/** Earliest moment ≥ free at which a step can start, with `leadMs` of a person's time first inside the same window. */
	earliestStart(free: number, leadMs: number): number | null {
		if (this.windows === null) return free + leadMs;
		const w = this.windows;
		for (let i = this.firstEndingAfter(free); i < w.length; i++) {
			const begin = Math.max(w[i][0], free) + leadMs;
			if (begin < w[i][1]) return begin;
		}
		return null;
	}

	/** Hours from `end` until someone is there (0 if present); null when nobody comes back. */
	holdHoursAfter(end: number): number | null {
		if (this.isPresent(end)) return 0;
		const next = this.nextStartAfter(end);
		return next === null ? null : (next - end) / MS_PER_HOUR;
	}

	/** Hours within [a, b) with nobody there. */
	unattendedHours(a: number, b: number): number {
		if (this.windows === null || b <= a) return 0;
		const w = this.windows;
		let covered = 0;
		for (let i = this.firstEndingAfter(a); i < w.length && w[i][0] < b; i++) {
			covered += Math.max(0, Math.min(b, w[i][1]) - Math.max(a, w[i][0]));
		}
		return (b - a - covered) / MS_PER_HOUR;
	}
}

/** Checks and merges hands-on windows; absent → always present. */
export function presenceFrom(handsOn: HandsOnWindow[] | undefined): Presence | Failure {
	if (handsOn === undefined) return new Presence(null);
	if (!Array.isArray(handsOn)) return fail('invalid-hands-on', 'Hands-on hours must be a list of windows.');
	const raw: [number, number][] = [];
	for (const w of handsOn) {
		const s = timeOf(w?.start);
		const e = timeOf(w?.end);
		if (!Number.isFinite(s) || !Number.isFinite(e) || e <= s) {
			return fail('invalid-hands-on', 'Each hands-on window needs a start before its end.');
		}
		raw.push([s, e]);
	}
	raw.sort((a, b) => a[0] - b[0]);
	const merged: [number, number][] = [];
	for (const w of raw) {
		const last = merged[merged.length - 1];
		if (last && w[0] <= last[1]) last[1] = Math.max(last[1], w[1]);
		else merged.push([w[0], w[1]]);
	}
	return new Presence(merged);
}

export interface CheckedBase {
	chem: Chemistry;
	groups: PlanGroup[];
	startMs: number;
	swapMs: number;
	presence: Presence;
}

/** Validates the fields every plan shares; a bleed has no set voltage to check. */
export function checkBase(
	input: Omit<PlanInputBase, 'setVolts'> & { setVolts?: number },
	needsSetVolts = true
): CheckedBase | Failure {
	if (!input || typeof input !== 'object') return fail('invalid-input', 'A plan input object is needed.');
	const chem = resolveChemistry(input.chemistry);
	if ('ok' in chem) return chem;
	if (needsSetVolts) {
		const setFailure = checkSetVolts(chem, input.setVolts as number);
		if (setFailure) return setFailure;
	}
	const startMs = timeOf(input.start);
	if (!Number.isFinite(startMs)) return fail('invalid-start', 'The plan needs a start time.');
	if (!Array.isArray(input.groups) || input.groups.length === 0) return fail('no-groups', 'The plan needs at least one group.');
	const ids = new Set<string>();
	for (const g of input.groups) {
		if (!g || g.id === undefined || g.id === null) return fail('invalid-group', 'Every group needs an id.');
		if (ids.has(g.id)) return fail('duplicate-group-id', `Group id ${g.id} appears twice.`);
		ids.add(g.id);
		if (!isPositive(g.capacityAh)) return fail('invalid-capacity', `Group ${g.id} needs a positive capacity.`);
		if (g.maxChargeAmps !== undefined && !isPositive(g.maxChargeAmps)) {
			return fail('invalid-group-rating', `Group ${g.id}: the charge rating must be positive.`);
		}
		if (g.resistanceOhms !== undefined && !isNonNegative(g.resistanceOhms)) {
			return fail('invalid-resistance', `Group ${g.id}: resistance must be zero or more.`);
		}
		const start = checkStart(chem, g.startSoc, g.startVolts);
		if ('ok' in start) return { ...start, detail: `Group ${g.id}: ${start.detail ?? start.reason}` };
	}
	if (input.amps !== undefined && !isPositive(input.amps)) return fail('invalid-amps', 'Requested amps must be positive.');
	if (input.terminationAmps !== undefined && !isPositive(input.terminationAmps)) {
		return fail('invalid-termination', 'Termination amps must be positive.');
	}
	const swapMinutes = input.swapMinutes ?? 0;
	if (!isNonNegative(swapMinutes)) return fail('invalid-swap-minutes', 'Swap minutes must be zero or more.');
	const presence = presenceFrom(input.handsOn);
	if ('ok' in presence) return presence;
	return { chem, groups: input.groups, startMs, swapMs: swapMinutes * MS_PER_MINUTE, presence };
}

/** Checks a channel's fields and id. */
export function checkChannel(channel: Channel | undefined, label = 'channel'): Failure | null {
	if (!channel || typeof channel !== 'object') return fail('invalid-channel', `A ${label} is needed.`);
	if (!isPositive(channel.maxAmps) || !isPositive(channel.maxVolts)) {
		return fail('invalid-channel', `The ${label} needs positive maxAmps and maxVolts.`);
	}
	if (channel.maxWatts !== undefined && !isPositive(channel.maxWatts)) {
		return fail('invalid-channel', `The ${label}'s maxWatts must be positive when given.`);
	}
	return null;
}

export interface GroupCharge {
	group: PlanGroup;
	estimate: ChargeEstimate;
	amps: number;
}

/** One group's charge on one channel: current from chargeAmps, then the CC/CV model. */
export function groupCharge(
	chem: Chemistry,
	group: PlanGroup,
	channel: Channel,
	setVolts: number,
	requestedAmps: number | undefined,
	terminationAmps: number | undefined,
	startSoc?: number
): GroupCharge | Failure {
	const current = chargeAmps({
		channel,
		groupMaxChargeAmps: group.maxChargeAmps ?? chem.defaultChargeC * group.capacityAh,
		setVolts,
		requestedAmps
	});
	if (!current.ok) return current;
	const start = startSoc === undefined ? checkStart(chem, group.startSoc, group.startVolts) : { startSoc };
	if ('ok' in start) return start;
	const model = chargeModel(
		chem,
		group.capacityAh,
		current.amps,
		setVolts,
		terminationAmps ?? chem.terminationC * group.capacityAh,
		group.resistanceOhms
	);
	return { group, amps: current.amps, estimate: runCharge(model, start.startSoc, startSoc === undefined ? start.startVolts : undefined) };
}

/** A set voltage to suggest for softer holds: 0.10 V lower, and for the 4.2 V family at most 4.10 V (BU-808: ≈ 85–90 % full). */
export function gentlerSetVolts(chem: Chemistry, setVolts: number): number {
	const lower = familyOf(chem) === 'li-ion' ? Math.min(setVolts - 0.1, 4.1) : setVolts - 0.1;
	return Math.max(chem.fullDischargeVolts + 0.1, Math.round(lower * 100) / 100);
}

function hoursText(hours: number): string {
	if (hours < 1) return `${Math.max(1, Math.round(hours * 60))} min`;
	return `${(Math.round(hours * 10) / 10).toFixed(1)} h`;
}

/** The calm, specific warning for a step that charges or holds with nobody there. */
export function unattendedWarning(
	chem: Chemistry,
	setVolts: number,
	groupId: string,
	chargeHours: number,
	holdHours: number,
	what = 'Group'
): PlanWarning {
	const parts: string[] = [];
	if (chargeHours > 0) parts.push(`charges for ${hoursText(chargeHours)} with nobody there`);
	if (holdHours > 0) {
		parts.push(`${chargeHours > 0 ? 'then sits' : 'sits'} held at ${setVolts.toFixed(2)} V per cell for ${hoursText(holdHours)} until someone is back`);
	}
	const gentler = gentlerSetVolts(chem, setVolts);
	return {
		code: holdHours > 0 ? 'unattended-hold' : 'unattended-charge',
		groupId,
		message:
			`${what} ${groupId} ${parts.join(' and ')}. ` +
			`Fire services advise against charging while asleep or away. To shorten or soften this: ` +
			`a lower set voltage (${gentler.toFixed(2)} V per cell is gentler to hold), a timer that switches the supply off when the step should end, ` +
			`and a fire-safe place — a hard non-flammable surface away from sleeping areas and escape routes. ` +
			`The cell maker's datasheet has the final word on limits.`
	};
}

/** Warning for a step longer than a charger's usual safety timer. */
export function longStepWarning(groupId: string, hours: number): PlanWarning {
	return {
		code: 'longer-than-safety-timer',
		groupId,
		message: `Group ${groupId} takes ${hoursText(hours)}, longer than the ${SAFETY_TIMER_HOURS} h safety timer of many chargers. Check the set current and watch this step closely.`
	};
}

/** Builds a step record (times in ms → Date). */
export function makeStep(
	groupId: string,
	channelId: string,
	startMs: number,
	estimate: ChargeEstimate,
	presence: Presence
): { step: PlanStep; endMs: number } | null {
	const endMs = startMs + estimate.totalHours * MS_PER_HOUR;
	const hold = presence.holdHoursAfter(endMs);
	if (hold === null) return null;
	return {
		endMs,
		step: {
			groupId,
			channelId,
			start: new Date(startMs),
			end: new Date(endMs),
			preHours: estimate.preHours,
			ccHours: estimate.ccHours,
			cvHours: estimate.cvHours,
			ahIn: estimate.ahIn,
			unattendedHoldHours: hold,
			unattendedChargeHours: presence.unattendedHours(startMs, endMs)
		}
	};
}

/** Safety warnings for a list of steps. */
export function stepWarnings(chem: Chemistry, setVolts: number, steps: PlanStep[]): PlanWarning[] {
	const warnings: PlanWarning[] = [];
	for (const s of steps) {
		if (s.unattendedChargeHours > 1e-9 || s.unattendedHoldHours > 1e-9) {
			warnings.push(unattendedWarning(chem, setVolts, s.groupId, s.unattendedChargeHours, s.unattendedHoldHours));
		}
		const hours = s.preHours + s.ccHours + s.cvHours;
		if (hours > SAFETY_TIMER_HOURS) warnings.push(longStepWarning(s.groupId, hours));
	}
	return warnings;
}

/** The failure when the hands-on hours end before every step can start and be attended to. */
export const NO_WINDOW_LEFT = fail(
	'hands-on-too-short',
	'The hands-on hours end before every step can start and be attended to; add later hands-on hours.'
);
