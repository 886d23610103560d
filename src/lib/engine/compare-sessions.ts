/**
 * Drift between sessions: when a session ends, how far each group sits from the others at the end
 * of charge and at rest, and how that changed since the pack's last session with the same target.
 * A group that moves away from the others by more than the drift limit gets a `session-drift`
 * warning whose message gives the numbers ("Group 7 ended 40 mV below the others, 25 mV more than
 * at the last full charge.").
 *
 * A group's **gap** is its voltage (per cell) minus the mean of the *other* groups' voltages in the
 * same session and moment (end of charge, or at rest) — the mean of the others, because that is
 * what "below the others" says. Including the group itself in the mean would shrink every gap by
 * (n − 1) / n. A gap needs the group and at least one other group; the gaps of a session sum to 0.
 */
import type { AlertSeverity } from './limits';
import { fail, isFiniteNumber, timeOf, type Result } from './types';

export interface SessionSnapshot {
	sessionId: string;
	endedAt: Date;
	/**
	 * What the session charged to; only sessions with the same target are compared. The caller
	 * makes it specific enough: 'full', 'storage', or e.g. 'volts:3.600' for a chosen voltage.
	 */
	target: string;
	/** Volts per cell of each group at the end of charge, by group id. */
	endVolts: Record<string, number>;
	/** Volts per cell of each group after resting, by group id (when someone logged them). */
	restVolts?: Record<string, number>;
}

export interface CompareSessionsInput {
	current: SessionSnapshot;
	/** The pack's other sessions, any order; those not ended before `current` are ignored. */
	earlier: SessionSnapshot[];
	/** Volts per cell; a gap that moves away from the others by more than this raises a warning. */
	driftLimitVolts: number;
	/** Group labels as people say them ("7"), by group id, for the message; the id otherwise. */
	labels?: Record<string, string>;
}

export interface GroupDrift {
	groupId: string;
	/** Gap at the end of charge (V per cell, negative below the others); null without another group. */
	endGapVolts: number | null;
	restGapVolts: number | null;
	/** The gap at the most recent earlier session with the same target that has it; null for none. */
	previousEndGapVolts: number | null;
	previousRestGapVolts: number | null;
	/** endGap − previousEndGap (V); null without both. */
	changeVolts: number | null;
	/** restGap − previousRestGap (V); null without both. */
	restChangeVolts: number | null;
	/** The session the end-of-charge change is counted from. */
	previousSessionId: string | null;
	/** The group moved away from the others by more than the limit (at the end of charge or at rest). */
	exceeds: boolean;
}

/** A drift between sessions, shaped like the engine's `AlertDraft` (kind 'session-drift'). */
export interface SessionDriftDraft {
	kind: 'session-drift';
	severity: AlertSeverity;
	groupId: string;
	/** The change of the gap in volts per cell: at the end of charge, or at rest when only that moved. */
	value: number;
	threshold: number;
	message: string;
	/** The numbers behind it, for the alert's details. */
	details: {
		moment: 'end' | 'rest';
		gapVolts: number;
		previousGapVolts: number;
		previousSessionId: string;
		endGapVolts: number | null;
		restGapVolts: number | null;
		previousEndGapVolts: number | null;
		previousRestGapVolts: number | null;
	};
}

export type SessionComparison = { groups: GroupDrift[]; alerts: SessionDriftDraft[] };

type Moment = 'end' | 'rest';

function valuesOf(s: SessionSnapshot, moment: Moment): Record<string, number> | undefined {
	const v = moment === 'end' ? s.endVolts : s.restVolts;
	return v && typeof v === 'object' ? v : undefined;
}

/** The group's voltage minus the mean of the other groups' (finite values only); null when it cannot be had. */
function gapOf(values: Record<string, number> | undefined, groupId: string): number | null {
	if (!values || !Object.hasOwn(values, groupId) || !isFiniteNumber(values[groupId])) return null;
	let sum = 0;
	let n = 0;
	for (const [id, v] of Object.entries(values)) {
		if (id !== groupId && isFiniteNumber(v)) {
			sum += v;
			n++;
		}
	}
	return n === 0 ? null : values[groupId] - sum / n;
}

function isSnapshot(s: unknown): s is SessionSnapshot {
	if (!s || typeof s !== 'object') return false;
	const x = s as SessionSnapshot;
	return typeof x.sessionId === 'string' && typeof x.target === 'string' && Number.isFinite(timeOf(x.endedAt)) && !!x.endVolts && typeof x.endVolts === 'object';
}

/** Whole millivolts of a voltage's size. */
const mv = (volts: number) => Math.round(Math.abs(volts) * 1000);

/** "the last full charge", as the message names the comparable session. */
function lastCharge(target: string, moment: Moment): string {
	const when = moment === 'end' ? 'at' : 'after';
	if (target === 'full') return `${when} the last full charge`;
	if (target === 'storage') return `${when} the last storage charge`;
	return `${when} the last charge to the same target`;
}

/** Where a gap puts the group: "40 mV below the others", "level with the others". */
function place(gap: number, others: string): string {
	const m = mv(gap);
	return m === 0 ? `level with ${others}` : `${m} mV ${gap < 0 ? 'below' : 'above'} ${others}`;
}

/** One sentence of the message for one moment. */
function sentence(label: string, moment: Moment, gap: number, previous: number, target: string, first: boolean): string {
	// The end of charge always comes first; the rest sentence follows it or stands alone.
	const subject = moment === 'end' ? `Group ${label}` : first ? `At rest, group ${label}` : 'At rest it';
	const verb = moment === 'end' ? 'ended' : 'sat';
	const others = first ? 'the others' : 'them';
	const then = lastCharge(target, moment);
	const sameSide = mv(previous) === 0 || Math.sign(gap) === Math.sign(previous);
	if (sameSide) {
		const grew = mv(gap) - mv(previous);
		const word = grew >= 0 ? 'more' : 'less';
		return `${subject} ${verb} ${place(gap, others)}, ${Math.abs(grew)} mV ${word} than ${then}.`;
	}
	return `${subject} ${verb} ${place(gap, others)}; ${then} it was ${place(previous, 'them')}.`;
}

/**
 * Each group of `current` with an end-of-charge voltage, against the most recent earlier session
 * (ended before `current`, same target) that has a gap for that group at that moment — so a session
 * where the group was not read is passed over for that group only. A group *exceeds* when its gap
 * changed by more than `driftLimitVolts` and ended farther from the others than before (|gap| grew):
 * a group coming back towards the others is not an alert. One warning per group that exceeds; its
 * value is the change at the end of charge, or at rest when only the rest gap moved. No earlier
 * session: gaps only, no alert. Groups in the order of `current.endVolts`.
 */
export function compareSessions(input: CompareSessionsInput): Result<SessionComparison> {
	if (!input || typeof input !== 'object') return fail('bad-input', 'Nothing to compare.');
	if (!isSnapshot(input.current)) return fail('bad-current-session', 'The ended session needs an id, an end time, a target and its end-of-charge voltages.');
	if (!isFiniteNumber(input.driftLimitVolts) || input.driftLimitVolts < 0) {
		return fail('bad-drift-limit', 'The drift limit must be a number of volts, zero or more.');
	}
	const current = input.current;
	const limit = input.driftLimitVolts;
	const endedAt = timeOf(current.endedAt);
	const comparable = (Array.isArray(input.earlier) ? input.earlier : [])
		.filter((s) => isSnapshot(s) && s.sessionId !== current.sessionId && s.target === current.target && timeOf(s.endedAt) < endedAt)
		.sort((a, b) => timeOf(b.endedAt) - timeOf(a.endedAt));

	const previousOf = (groupId: string, moment: Moment) => {
		for (const s of comparable) {
			const gap = gapOf(valuesOf(s, moment), groupId);
			if (gap !== null) return { gap, sessionId: s.sessionId };
		}
		return null;
	};

	const groups: GroupDrift[] = [];
	const alerts: SessionDriftDraft[] = [];
	for (const groupId of Object.keys(current.endVolts)) {
		if (!isFiniteNumber(current.endVolts[groupId])) continue;
		const endGap = gapOf(current.endVolts, groupId);
		const restGap = gapOf(valuesOf(current, 'rest'), groupId);
		const prevEnd = endGap === null ? null : previousOf(groupId, 'end');
		const prevRest = restGap === null ? null : previousOf(groupId, 'rest');
		const change = endGap !== null && prevEnd ? endGap - prevEnd.gap : null;
		const restChange = restGap !== null && prevRest ? restGap - prevRest.gap : null;
		const away = (gap: number | null, prev: { gap: number } | null, delta: number | null) =>
			gap !== null && prev !== null && delta !== null && Math.abs(delta) > limit && Math.abs(gap) > Math.abs(prev.gap);
		const endAway = away(endGap, prevEnd, change);
		const restAway = away(restGap, prevRest, restChange);
		groups.push({
			groupId,
			endGapVolts: endGap,
			restGapVolts: restGap,
			previousEndGapVolts: prevEnd?.gap ?? null,
			previousRestGapVolts: prevRest?.gap ?? null,
			changeVolts: change,
			restChangeVolts: restChange,
			previousSessionId: prevEnd?.sessionId ?? null,
			exceeds: endAway || restAway
		});
		if (!endAway && !restAway) continue;
		const label = input.labels?.[groupId] ?? groupId;
		const parts: string[] = [];
		if (endAway) parts.push(sentence(label, 'end', endGap!, prevEnd!.gap, current.target, true));
		if (restAway) parts.push(sentence(label, 'rest', restGap!, prevRest!.gap, current.target, !endAway));
		const moment: Moment = endAway ? 'end' : 'rest';
		const gap = (endAway ? endGap : restGap)!;
		const prev = (endAway ? prevEnd : prevRest)!;
		alerts.push({
			kind: 'session-drift',
			severity: 'warning',
			groupId,
			value: (endAway ? change : restChange)!,
			threshold: limit,
			message: parts.join(' '),
			details: {
				moment,
				gapVolts: gap,
				previousGapVolts: prev.gap,
				previousSessionId: prev.sessionId,
				endGapVolts: endGap,
				restGapVolts: restGap,
				previousEndGapVolts: prevEnd?.gap ?? null,
				previousRestGapVolts: prevRest?.gap ?? null
			}
		});
	}
	return { ok: true, groups, alerts };
}
