/**
 * What the run screen shows, from the session, its steps, the pack's groups and the readings: the
 * running and next steps, a tile per group (volts per cell, mV from the pack's mean, °C, state in
 * words from the session's limits and the engine's evaluateReadings), time to full of each running
 * step from the engine's reestimate, the session's expected end, when the next reading is due and
 * the rest readings asked for. `buildRunView` is pure (the clock is passed in); `loadRunReadings`
 * is the one query it needs.
 */
import { sql } from 'drizzle-orm';
import {
	defaultLimits,
	endSocAtSetVolts,
	evaluateReadings,
	reestimate,
	type AlertDraft,
	type Chemistry,
	type GroupReading,
	type Limits
} from '$lib/engine';
import { severityState as storedAlertState } from '$lib/alert-screen';
import { perCellVolts } from '$lib/readings-math';
import { stepInstruction, stepNowText, type RunState } from '$lib/run-words';
import { db } from '../db';

const MS_PER_HOUR = 3_600_000;
const MS_PER_MINUTE = 60_000;

export type RunReading = {
	id: number;
	groupId: string | null;
	stepId: string | null;
	takenAt: Date;
	volts: number | null;
	amps: number | null;
	tempC: number | null;
	ambientC: number | null;
};

export type RunStepInput = {
	id: string;
	position: number;
	groupId: string | null;
	channelId: string | null;
	channelLabel: string;
	role: string;
	setVolts: number | null;
	amps: number | null;
	/** Amp-hours the plan puts in (the step's start state follows from it). */
	ah: number;
	expectedStart: Date;
	expectedEnd: Date;
	actualStart: Date | null;
	actualEnd: Date | null;
	status: 'waiting' | 'running' | 'done' | 'skipped';
	restReadingDueAt: Date | null;
};

export type RunInput = {
	session: {
		status: 'draft' | 'planned' | 'running' | 'paused' | 'done' | 'stopped';
		setVolts: number | null;
		readingIntervalMinutes: number;
		limits: Record<string, number>;
		startedAt: Date | null;
		endedAt: Date | null;
		plannedEnd: Date | null;
	};
	pack: { series: number; parallel: number; chemistry: Chemistry; cellCapacityAh: number };
	groups: { id: string; index: number }[];
	steps: RunStepInput[];
	/** At least the newest two of each group and whole pack, and every reading of the running steps. */
	readings: RunReading[];
	/** The session's stored alerts that are active or need attention (loadRunAlerts). */
	alerts?: RunAlert[];
	now: Date;
};

/** A stored alert of the session (alerts table) as the run screen needs it. */
export type RunAlert = {
	id: string;
	severity: 'info' | 'warning' | 'critical';
	groupId: string | null;
	title: string;
	action: string;
	/** The condition still holds (cleared_at is null). */
	active: boolean;
	/** Somebody acknowledged it. */
	acknowledged: boolean;
};

export type RunStep = {
	id: string;
	position: number;
	groupIndex: number | null;
	role: string;
	/** The channel's id, or its label when it has none: steps with the same key share the leads. */
	channelKey: string;
	channelLabel: string;
	status: RunStepInput['status'];
	/** What to do to start it ("Move the leads to group 5, set 4.20 V and 10 A"). */
	instruction: string;
	/** What it does while it runs ("Group 5 on the charger: 4.20 V, 10 A"). */
	nowText: string;
	expectedStart: string;
	expectedEnd: string;
	actualStart: string | null;
};

export type TimeToFull = {
	stepId: string;
	groupIndex: number | null;
	/** Hours left, and where the figure comes from. */
	hours: number;
	basis: 'readings' | 'plan';
	phase: 'pre' | 'cc' | 'cv' | 'done' | null;
	/** When a reading with volts and amps of this step would give a figure from the readings. */
	note: string | null;
};

export type GroupTile = {
	id: string;
	index: number;
	/** Volts per cell of the newest reading with volts. */
	volts: number | null;
	/** Difference from the mean of the groups' latest volts, in mV. */
	deltaMilliVolts: number | null;
	tempC: number | null;
	takenAt: string | null;
	state: RunState;
	/** On a running step now. */
	charging: boolean;
	/** What the limits say about this group, most serious first (each says what to do). */
	messages: string[];
	/** The group's most serious active stored alert, for a link to its page. */
	alert: { id: string; severity: RunAlert['severity']; title: string } | null;
};

export type RestRequest = { stepId: string; groupIndex: number | null; dueAt: string; isDue: boolean };

export type RunView = {
	running: RunStep[];
	next: RunStep | null;
	progress: { done: number; total: number };
	tiles: GroupTile[];
	pack: { volts: number; perCell: number; takenAt: string; state: RunState; messages: string[] } | null;
	/** Alerts that belong to no single group (drift names its furthest group but is about the pack). */
	packMessages: { severity: AlertDraft['severity']; message: string }[];
	timeToFull: TimeToFull[];
	expectedEnd: string | null;
	nextReadingDue: string | null;
	lastReadingAt: string | null;
	restRequests: RestRequest[];
	limits: Limits | null;
	/** The session's stored alerts that are active or need attention, most serious first (group index added). */
	alerts: (Omit<RunAlert, 'groupId'> & { groupIndex: number | null })[];
	/** A critical alert of this session needs attention: the run screen sounds its alarm. */
	alarm: boolean;
};

const severityState: Record<AlertDraft['severity'], RunState> = { critical: 'act-now', warning: 'watch', info: 'watch' };
const stateRank: Record<RunState, number> = { idle: 0, steady: 1, watch: 2, 'act-now': 3 };
const severityRank: Record<AlertDraft['severity'], number> = { info: 0, warning: 1, critical: 2 };
const CHARGING_ROLES = new Set(['charge', 'top-up', 'balance']);
/** Within this of the set voltage a group counts as at it (lead and meter drop), as in reestimate [CP]. */
const CV_VOLTS_BAND = 0.03;

/** The session's limits over the engine's defaults (a stored set may predate a new key). */
export function sessionLimits(input: Pick<RunInput, 'session' | 'pack'>): Limits | null {
	const chem = input.pack.chemistry;
	const base = defaultLimits(chem, input.session.setVolts ?? chem.maxChargeVolts);
	if (!base.ok) return null;
	const { ok: _ok, ...defaults } = base;
	return { ...defaults, ...input.session.limits } as Limits;
}

function perCellSetVolts(step: RunStepInput, series: number): number | null {
	if (step.setVolts === null) return null;
	return step.groupId === null ? step.setVolts / series : step.setVolts;
}

const iso = (d: Date | null) => (d ? d.toISOString() : null);

export function buildRunView(input: RunInput): RunView {
	return evaluateRun(input).view!;
}

/**
 * What the engine's rules say of the session's newest readings (the group's index as each draft's
 * groupId, so that its message says "Group 5"; the whole pack's own reading under 'pack'), beside
 * the view. The alerts raised on every stored reading come from here (alerts/raise.ts), so the run
 * screen's tiles and the alerts always judge alike.
 */
export type RunDrafts = { groups: AlertDraft[]; pack: AlertDraft[] };

export function evaluateRun(input: RunInput, options: { draftsOnly?: boolean } = {}): { view: RunView | null; drafts: RunDrafts } {
	const { session, pack, groups, steps, now } = input;
	const nowMs = now.getTime();
	const indexOf = new Map(groups.map((g) => [g.id, g.index]));
	const idOfIndex = new Map(groups.map((g) => [String(g.index), g.id]));
	const ordered = [...steps].sort((a, b) => a.position - b.position);
	const channels = new Set(ordered.map((s) => s.channelId ?? ''));
	const limits = sessionLimits(input);
	const isLive = session.status === 'running' || session.status === 'paused';

	const toRunStep = (s: RunStepInput): RunStep => {
		const earlier = ordered.filter((o) => o.position < s.position && (o.channelId ?? '') === (s.channelId ?? ''));
		const groupIndex = s.groupId === null ? null : (indexOf.get(s.groupId) ?? null);
		const words = { groupIndex, role: s.role, setVolts: s.setVolts, amps: s.amps, channelLabel: s.channelLabel };
		return {
			id: s.id,
			position: s.position,
			groupIndex,
			role: s.role,
			channelKey: s.channelId ?? `label:${s.channelLabel}`,
			channelLabel: s.channelLabel,
			status: s.status,
			instruction: stepInstruction(words, { move: earlier.some((o) => o.groupId !== null), showChannel: channels.size > 1 }),
			nowText: stepNowText(words),
			expectedStart: s.expectedStart.toISOString(),
			expectedEnd: s.expectedEnd.toISOString(),
			actualStart: iso(s.actualStart)
		};
	};

	const runningSteps = ordered.filter((s) => s.status === 'running');
	const waiting = ordered.filter((s) => s.status === 'waiting');

	// Newest first, per group (whole pack under ''), with per-cell volts.
	const readings = [...input.readings].sort((a, b) => b.takenAt.getTime() - a.takenAt.getTime() || b.id - a.id);
	const byGroup = new Map<string, RunReading[]>();
	for (const r of readings) {
		const key = r.groupId ?? '';
		const list = byGroup.get(key) ?? [];
		list.push(r);
		byGroup.set(key, list);
	}
	const cellVolts = (r: RunReading) =>
		perCellVolts({ groupIndex: r.groupId === null ? null : 1, volts: r.volts }, pack.series);
	const newestWith = (list: RunReading[] | undefined, pick: (r: RunReading) => number | null) => {
		for (const r of list ?? []) if (pick(r) !== null) return r;
		return undefined;
	};

	// The engine's alerts, with the group's index as its id so that its messages say "Group 5".
	const chargingGroupIds = new Set<string>();
	for (const s of runningSteps) {
		if (!CHARGING_ROLES.has(s.role)) continue;
		if (s.groupId === null) groups.forEach((g) => chargingGroupIds.add(g.id));
		else chargingGroupIds.add(s.groupId);
	}
	const engineReading = (groupKey: string, r: RunReading): GroupReading => ({
		groupId: groupKey,
		at: r.takenAt,
		volts: cellVolts(r) ?? undefined,
		amps: r.amps ?? undefined,
		tempC: r.tempC ?? undefined
	});
	const latestOf = (ids: string[]) =>
		ids.flatMap((id) => {
			const r = byGroup.get(id)?.[0];
			return r ? [engineReading(String(indexOf.get(id)), r)] : [];
		});
	const previousOf = (ids: string[]) =>
		ids.flatMap((id) => {
			const r = byGroup.get(id)?.[1];
			return r ? [engineReading(String(indexOf.get(id)), r)] : [];
		});
	const ambientC = newestWith(readings, (r) => r.ambientC)?.ambientC ?? undefined;
	const groupIds = groups.map((g) => g.id);
	const chargingIds = groupIds.filter((id) => chargingGroupIds.has(id));
	const wholePackCharging = runningSteps.some((s) => s.groupId === null && CHARGING_ROLES.has(s.role));
	const stillToCharge = new Set(ordered.filter((s) => s.groupId !== null && (s.status === 'waiting' || s.status === 'running')).map((s) => s.groupId));
	const driftIds = wholePackCharging ? groupIds : groupIds.filter((id) => !stillToCharge.has(id));
	const terminationAmps = pack.chemistry.terminationC * pack.cellCapacityAh * pack.parallel;
	const atSetVolts = (groupKey: string | undefined) => {
		const id = groupKey === undefined ? undefined : idOfIndex.get(groupKey);
		const r = id === undefined ? undefined : newestWith(byGroup.get(id), (x) => x.volts);
		const v = r ? cellVolts(r) : null;
		return session.setVolts === null || (v !== null && v >= session.setVolts - CV_VOLTS_BAND);
	};
	const alerts: AlertDraft[] = limits
		? [
				// Limits of volts and temperature, whatever charges.
				...evaluateReadings({ limits, latest: latestOf(groupIds), ambientC, charging: false, now }).filter((a) => a.kind !== 'drift'),
				// Drift only between groups in the same state: a group on the charger, or still waiting
				// for its turn, is meant to differ from the charged ones.
				...evaluateReadings({ limits, latest: latestOf(driftIds), charging: false, now }).filter((a) => a.kind === 'drift'),
				// What only applies while a group charges: cold charge, heat rise, current down to the end.
				...evaluateReadings({
					limits,
					latest: latestOf(chargingIds),
					previous: previousOf(chargingIds),
					ambientC,
					charging: session.status === 'running',
					terminationAmps,
					now
				})
					.filter((a) => a.kind === 'cold-charge' || a.kind === 'heat-rise' || a.kind === 'step-finished')
					// A supply set below the usual end current (C/20 of a big group) is under it from the
					// start: the step ends only once the group is also at its set voltage, as reestimate says.
					.filter((a) => a.kind !== 'step-finished' || atSetVolts(a.groupId))
			]
		: [];
	alerts.sort((a, b) => severityRank[b.severity] - severityRank[a.severity]);

	const storedAlerts = [...(input.alerts ?? [])].sort((a, b) => severityRank[b.severity] - severityRank[a.severity]);

	const withVolts = groups.flatMap((g) => {
		const r = newestWith(byGroup.get(g.id), (x) => x.volts);
		return r ? [cellVolts(r)!] : [];
	});
	const mean = withVolts.length ? withVolts.reduce((a, b) => a + b, 0) / withVolts.length : null;
	const packMessages: RunView['packMessages'] = [];
	const tiles: GroupTile[] = groups
		.slice()
		.sort((a, b) => a.index - b.index)
		.map((g) => {
			const list = byGroup.get(g.id);
			const vReading = newestWith(list, (x) => x.volts);
			const tReading = newestWith(list, (x) => x.tempC);
			const volts = vReading ? cellVolts(vReading) : null;
			const mine = alerts.filter((a) => a.groupId !== undefined && idOfIndex.get(a.groupId) === g.id && a.kind !== 'drift');
			const drift = alerts.find((a) => a.kind === 'drift' && a.groupId !== undefined && idOfIndex.get(a.groupId) === g.id);
			let state: RunState = list?.length ? (isLive ? 'steady' : 'idle') : 'idle';
			for (const a of [...mine, ...(drift ? [drift] : [])]) {
				const s = severityState[a.severity];
				if (stateRank[s] > stateRank[state]) state = s;
			}
			// A stored alert whose condition still holds says the same, even if the newest reading no longer shows it.
			const stored = storedAlerts.filter((a) => a.active && a.groupId === g.id);
			for (const a of stored) {
				const s = storedAlertState(a.severity);
				if (s && stateRank[s] > stateRank[state]) state = s;
			}
			return {
				id: g.id,
				index: g.index,
				volts,
				deltaMilliVolts: volts !== null && mean !== null && withVolts.length >= 2 ? (volts - mean) * 1000 : null,
				tempC: tReading?.tempC ?? null,
				takenAt: iso(list?.[0]?.takenAt ?? null),
				state,
				charging: chargingGroupIds.has(g.id) && session.status === 'running',
				messages: mine.map((a) => a.message),
				alert: stored[0] ? { id: stored[0].id, severity: stored[0].severity, title: stored[0].title } : null
			};
		});
	for (const a of alerts) if (a.kind === 'drift') packMessages.push({ severity: a.severity, message: a.message });

	// The whole pack's own reading, judged per cell on its own (no drift against the groups).
	let packTile: RunView['pack'] = null;
	let packDrafts: AlertDraft[] = [];
	const packReading = newestWith(byGroup.get(''), (x) => x.volts);
	if (packReading) {
		const perCell = cellVolts(packReading)!;
		const packAlerts = limits
			? evaluateReadings({ limits, latest: [engineReading('pack', packReading)], charging: false, now })
			: [];
		packDrafts = packAlerts;
		let state: RunState = isLive ? 'steady' : 'idle';
		for (const a of packAlerts) if (stateRank[severityState[a.severity]] > stateRank[state]) state = severityState[a.severity];
		packTile = {
			volts: packReading.volts!,
			perCell,
			takenAt: packReading.takenAt.toISOString(),
			state,
			messages: packAlerts.map((a) => a.message.replace(/^Group pack/, 'The pack'))
		};
	}

	// Judging a reading needs no more: the time to full (the engine's re-estimate) is for the screen.
	if (options.draftsOnly) return { view: null, drafts: { groups: alerts, pack: packDrafts } };

	// Time to full of each running charge step: the engine from its own readings, else the plan.
	const timeToFull: TimeToFull[] = [];
	const remainingMs = new Map<string, number>();
	for (const s of runningSteps) {
		const groupIndex = s.groupId === null ? null : (indexOf.get(s.groupId) ?? null);
		const planned = s.expectedEnd.getTime() - s.expectedStart.getTime();
		const fromPlan = Math.max(0, (s.actualStart?.getTime() ?? nowMs) + planned - nowMs);
		const setVolts = perCellSetVolts(s, pack.series);
		let entry: TimeToFull = {
			stepId: s.id,
			groupIndex,
			hours: fromPlan / MS_PER_HOUR,
			basis: 'plan',
			phase: null,
			note: 'From the plan: log the group’s volts and the charger’s current to correct it.'
		};
		if (CHARGING_ROLES.has(s.role) && s.role !== 'balance' && setVolts !== null && s.amps) {
			const stepReadings = readings
				.filter((r) => r.stepId === s.id && r.groupId === s.groupId && r.volts !== null && r.amps !== null)
				.map((r) => ({ at: r.takenAt, volts: cellVolts(r)!, amps: r.amps! }));
			if (stepReadings.length) {
				const capacityAh = pack.cellCapacityAh * pack.parallel;
				// The plan's start state of the step: its end state less the amp-hours it puts in.
				const startSoc = endSocAtSetVolts(pack.chemistry, setVolts) - s.ah / capacityAh;
				const est = reestimate({
					chemistry: pack.chemistry,
					capacityAh,
					setVolts,
					amps: s.amps,
					readings: stepReadings,
					now,
					...(s.actualStart && s.ah > 0 && startSoc >= 0 ? { counted: { startSoc, startedAt: s.actualStart } } : {})
				});
				if (est.ok) entry = { ...entry, hours: est.remainingHours, basis: 'readings', phase: est.phase, note: null };
			}
		}
		timeToFull.push(entry);
		remainingMs.set(s.id, entry.hours * MS_PER_HOUR);
	}

	// Expected end: each channel's waiting steps move by what its running step gained or lost.
	let expectedEnd: Date | null = null;
	if (session.status === 'done' || session.status === 'stopped') expectedEnd = session.endedAt;
	else if (!isLive) expectedEnd = session.plannedEnd ?? (ordered.length ? ordered[ordered.length - 1].expectedEnd : null);
	else {
		let end = nowMs;
		const shiftOf = new Map<string, number>();
		for (const s of runningSteps) {
			const ends = nowMs + (remainingMs.get(s.id) ?? 0);
			shiftOf.set(s.channelId ?? '', ends - s.expectedEnd.getTime());
			end = Math.max(end, ends);
		}
		for (const s of waiting) {
			const channel = s.channelId ?? '';
			if (!shiftOf.has(channel)) shiftOf.set(channel, Math.max(0, nowMs - s.expectedStart.getTime()));
			end = Math.max(end, s.expectedEnd.getTime() + shiftOf.get(channel)!);
		}
		expectedEnd = new Date(end);
	}

	// The next reading: the newest reading plus the interval (from the start before the first one).
	const newest = readings[0]?.takenAt ?? null;
	const dueFrom = newest ?? session.startedAt;
	const nextReadingDue =
		session.status === 'running' && dueFrom ? new Date(dueFrom.getTime() + session.readingIntervalMinutes * MS_PER_MINUTE) : null;

	// Rest readings: a finished step's group once it has rested, until a reading of it comes after.
	const restRequests: RestRequest[] = [];
	if (session.status !== 'stopped') {
		const seen = new Set<string>();
		for (const s of [...ordered].reverse()) {
			// A step skipped while it ran (or ended by a stop) asks for its rest reading too.
			if ((s.status !== 'done' && s.status !== 'skipped') || !s.restReadingDueAt) continue;
			const key = s.groupId ?? '';
			if (seen.has(key)) continue;
			seen.add(key);
			if (chargingGroupIds.has(s.groupId ?? '') && session.status === 'running') continue;
			const after = byGroup.get(key)?.some((r) => r.volts !== null && r.takenAt.getTime() >= s.restReadingDueAt!.getTime());
			if (after) continue;
			restRequests.push({
				stepId: s.id,
				groupIndex: s.groupId === null ? null : (indexOf.get(s.groupId) ?? null),
				dueAt: s.restReadingDueAt.toISOString(),
				isDue: s.restReadingDueAt.getTime() <= nowMs
			});
		}
		restRequests.sort((a, b) => a.dueAt.localeCompare(b.dueAt));
	}

	const view: RunView = {
		running: runningSteps.map(toRunStep),
		next: waiting[0] ? toRunStep(waiting[0]) : null,
		progress: { done: ordered.filter((s) => s.status === 'done' || s.status === 'skipped').length, total: ordered.length },
		tiles,
		pack: packTile,
		packMessages,
		timeToFull,
		expectedEnd: iso(expectedEnd),
		nextReadingDue: iso(nextReadingDue),
		lastReadingAt: iso(newest),
		restRequests,
		limits,
		alerts: storedAlerts.map(({ groupId, ...a }) => ({ ...a, groupIndex: groupId === null ? null : (indexOf.get(groupId) ?? null) })),
		alarm: storedAlerts.some((a) => a.severity === 'critical' && !a.acknowledged)
	};
	return { view, drafts: { groups: alerts, pack: packDrafts } };
}

/**
 * The session's stored alerts that are active or need attention, in one query (alerts_session_idx):
 * the tiles' state and the run screen's alarm.
 */
export async function loadRunAlerts(sessionId: string): Promise<RunAlert[]> {
	const rows = (await db.execute(sql`
		select id, severity, group_id, title, action, cleared_at is null as active, acknowledged_at is not null as acknowledged
		from alerts
		where session_id = ${sessionId} and (cleared_at is null or acknowledged_at is null)
		order by opened_at desc
		limit 200
	`)) as unknown as { id: string; severity: RunAlert['severity']; group_id: string | null; title: string; action: string; active: boolean; acknowledged: boolean }[];
	return rows.map((r) => ({
		id: r.id,
		severity: r.severity,
		groupId: r.group_id,
		title: r.title,
		action: r.action,
		active: r.active,
		acknowledged: r.acknowledged
	}));
}

type ReadingRow = {
	id: string | number;
	group_id: string | null;
	step_id: string | null;
	taken_at: Date | string;
	volts: number | null;
	amps: number | null;
	temp_c: number | null;
	ambient_c: number | null;
};

/**
 * The readings the run screen needs, in one query: the newest two of each group (and of the whole
 * pack), also the newest two with volts and with a temperature — for the tiles, heat rise and rest
 * readings —, the newest room temperature (among the last thousand readings), and every reading
 * of the running steps for the re-estimate.
 */
export async function loadRunReadings(sessionId: string, runningStepIds: string[]): Promise<RunReading[]> {
	// Index lookups per group (readings_session_group_taken_idx), never a pass over the session:
	// a 100,000-reading session reads a few dozen rows and its running steps' readings.
	const rows = (await db.execute(sql`
		with newest as (
			select x.* from charge_sessions s
			join pack_groups g on g.pack_id = s.pack_id
			cross join lateral (
				(select * from readings y where y.session_id = s.id and y.group_id = g.id order by y.taken_at desc limit 2)
				union all
				(select * from readings y where y.session_id = s.id and y.group_id = g.id and y.volts is not null
					order by y.taken_at desc limit 2)
				union all
				(select * from readings y where y.session_id = s.id and y.group_id = g.id and y.temp_c is not null
					order by y.taken_at desc limit 2)
			) x
			where s.id = ${sessionId}
			union all
			(select * from readings where session_id = ${sessionId} and group_id is null order by taken_at desc limit 2)
			union all
			(select * from readings where session_id = ${sessionId} and group_id is null and volts is not null
				order by taken_at desc limit 2)
			union all
			(select * from readings where session_id = ${sessionId} and group_id is null and temp_c is not null
				order by taken_at desc limit 2)
		),
		room as (
			select * from (select * from readings where session_id = ${sessionId} order by taken_at desc limit 1000) recent
			where ambient_c is not null order by taken_at desc limit 1
		),
		steps as (
			select r.* from readings r
			where r.session_id = ${sessionId} and r.step_id = any(${sql.param(runningStepIds)}::text[])
				and r.taken_at >= (select min(actual_start) from session_steps where id = any(${sql.param(runningStepIds)}::text[]))
		)
		select distinct on (id) id, group_id, step_id, taken_at, volts, amps, temp_c, ambient_c
		from (select * from newest union all select * from room union all select * from steps) all_rows
		order by id
	`)) as unknown as ReadingRow[];
	return rows.map((r) => ({
		id: Number(r.id),
		groupId: r.group_id,
		stepId: r.step_id,
		takenAt: new Date(r.taken_at),
		volts: r.volts,
		amps: r.amps,
		tempC: r.temp_c,
		ambientC: r.ambient_c
	}));
}
