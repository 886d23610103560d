/**
 * A pack's history (issue 10, item 1): every session that ran (running, paused, done, stopped) and,
 * per group and session, the figures the history page charts and tabulates, with the weakest and
 * any drifting group named in words and each group's health from the engine (src/lib/engine/health).
 *
 * How each figure is read (volts per cell; a whole-pack reading is ÷ the groups in series):
 * - **end volts**: the group's newest volts reading taken while its last charge step ran (role
 *   charge, top-up or balance, the group's own step or a whole-pack step; between the step's actual
 *   start and end) — the same reading the drift alert between sessions compares (alerts/session-drift).
 * - **rest volts after**: the group's first volts reading with no current (amps not logged or
 *   under REST_AMPS) taken at least REST_HOURS_AFTER_CHARGE less 15 minutes after its last charge
 *   step ended — the reading the run screen asks for (RunRestRequests, `restReadingDueAt`).
 * - **rest volts before**: the group's newest volts reading with no current taken before its first
 *   charge step started.
 * - **Ah taken**: per charge step, a trapezoid over the logged currents (the group's own readings;
 *   in a whole-pack step also the pack's readings: the same current flows through every group in
 *   series), the first current held back to the step's actual start and the last one held to its
 *   end. A step with no current logged makes the session's Ah "not logged".
 * - **time in CV**: per charge step, from the first reading at the set voltage (within CV_VOLTS_BAND,
 *   as the run screen reads a step's phase) to the step's end; in a whole-pack step the pack's own
 *   readings decide (the charger holds the pack's voltage), else the group's against the set
 *   voltage ÷ series. It counts from the first reading that shows CV, so it is short of the truth by
 *   at most one reading interval. A step with no volts logged makes it unknown.
 * - **peak °C**: the group's highest temperature reading in the session.
 * - **charge resistance**: ΔV/ΔI between the group's last reading before a charge step of its own
 *   started (no current) and its first reading with a current after (the engine's chargeResistance
 *   says whether they are close enough in time).
 *
 * Speed: every reading query is an index range probe on readings_session_group_taken_idx per
 * (step, group) or (session, group), never a pass over a pack's readings in Node.
 */
import { eq, sql } from 'drizzle-orm';
import { compareSessions, type Chemistry, type SessionSnapshot } from '$lib/engine';
import { capacityFromRestStates, chargeResistance, chargesUntilFade, linearTrend } from '$lib/engine/health';
import type { Member } from '../auth/permissions';
import { specChemistry } from '../cell-specs';
import { db } from '../db';
import { cellSpecs, chemistryProfiles } from '../db/schema';
import { requirePack } from '../packs';
import { targetKey } from '../alerts/session-drift';
import { sessionLimits } from './run-view';
import { REST_HOURS_AFTER_CHARGE } from './transitions';

/** Within this of the set voltage (V per cell) a reading counts as at it: run-view's and reestimate's band [CP]. */
export const CV_VOLTS_BAND = 0.03;
/** Under this current (A) a reading counts as at rest ("amps ≈ 0": a meter's noise on an open lead). */
export const REST_AMPS = 0.05;
/** How early before the asked rest time a reading still counts as at rest (as the drift alert). */
const REST_SLACK_MINUTES = 15;
const CHARGE_ROLES = ['charge', 'top-up', 'balance'];
const HOUR = 3_600_000;

export const HISTORY_FIGURES = ['endVolts', 'restVolts', 'ah', 'cvHours', 'peakTempC'] as const;
export type HistoryFigure = (typeof HISTORY_FIGURES)[number];

export type GroupFigures = {
	groupId: string;
	index: number;
	endVolts: number | null;
	restVoltsBefore: number | null;
	restVolts: number | null;
	/** Ah put into the group in the session's charge steps; null with `ahMissing` saying why. */
	ah: number | null;
	ahMissing: string | null;
	cvHours: number | null;
	peakTempC: number | null;
	/** Capacity counted between the rest readings before and after (engine), when they allow it. */
	capacityAh: number | null;
	capacityNote: string | null;
	/** Charge resistance at the start of the group's own step (mΩ per group), when the readings allow it. */
	resistanceMilliohms: number | null;
};

export type HistorySession = {
	id: string;
	name: string;
	kind: string;
	status: 'running' | 'paused' | 'done' | 'stopped';
	target: string;
	targetVolts: number | null;
	startedAt: Date;
	endedAt: Date | null;
	groups: GroupFigures[];
};

export type GroupHealth = {
	index: number;
	/** Newest capacity counted (Ah per group), and the session it was counted in. */
	capacityAh: number | null;
	capacityFrom: string | null;
	/** Newest charge resistance (mΩ per group), and the session it was read in. */
	resistanceMilliohms: number | null;
	resistanceFrom: string | null;
	/** "At this rate group 7 reaches 80 % of its first capacity in about N charges", when the engine gives it. */
	fade: string | null;
	/** What is missing for a figure, in words that say what to log (the same words for every group where it is the same). */
	notes: string[];
};

export type Finding = { index: number; text: string };

export type PackHistory = {
	pack: { id: string; name: string; series: number; parallel: number; cellCapacityAh: number };
	groups: { id: string; index: number }[];
	/** Oldest first (the chart's x axis). */
	sessions: HistorySession[];
	weakest: Finding | null;
	drifting: Finding[];
	/** Said when there is too little to name a weakest group. */
	summaryNote: string | null;
	health: GroupHealth[];
	driftLimitVolts: number | null;
};

type StepRow = {
	session_id: string;
	step_id: string;
	group_id: string;
	step_group_id: string | null;
	position: number;
	actual_start: string | Date;
	actual_end: string | Date | null;
	until_at: string | Date;
	n_amps: string | number;
	amp_seconds: number | null;
	n_volts: string | number;
	end_volts: number | null;
	cv_group_at: string | Date | null;
	n_pack_volts: string | number;
	cv_pack_at: string | Date | null;
	before_volts: number | null;
	before_amps: number | null;
	before_at: string | Date | null;
	after_volts: number | null;
	after_amps: number | null;
	after_at: string | Date | null;
};

type SpanRow = {
	session_id: string;
	group_id: string;
	peak_c: number | null;
	rest_before: number | null;
	rest_after: number | null;
};

/** The pack's history, for a member who may see the pack (404 otherwise, as the pack page). */
export async function loadPackHistory(member: Member, packId: string, now = new Date()): Promise<PackHistory> {
	const pack = await requirePack(member, packId);
	const [specRow] = await db
		.select({ spec: cellSpecs, profile: chemistryProfiles })
		.from(cellSpecs)
		.leftJoin(chemistryProfiles, eq(chemistryProfiles.id, cellSpecs.chemistryProfileId))
		.where(eq(cellSpecs.id, pack.cellSpecId));
	const chemistry = specChemistry(specRow.spec, specRow.profile);
	const packInfo = { id: pack.id, name: pack.name, series: pack.series, parallel: pack.parallel, cellCapacityAh: specRow.spec.capacityAh };

	const [sessionRows, groupRows] = await Promise.all([
		db.execute(sql`
			select id, name, kind, status, target, target_volts, set_volts, limits, started_at, ended_at
			from charge_sessions
			where pack_id = ${pack.id} and workshop_id = ${member.workshop.id}
				and status in ('running', 'paused', 'done', 'stopped') and started_at is not null
			order by started_at, id`) as unknown as Promise<
			{ id: string; name: string; kind: string; status: HistorySession['status']; target: string; target_volts: number | null; set_volts: number | null; limits: Record<string, number>; started_at: string | Date; ended_at: string | Date | null }[]
		>,
		db.execute(sql`select id, index from pack_groups where pack_id = ${pack.id} order by index`) as unknown as Promise<{ id: string; index: number }[]>
	]);
	const groups = groupRows.map((g) => ({ id: g.id, index: Number(g.index) }));
	if (sessionRows.length === 0) {
		return { pack: packInfo, groups, sessions: [], weakest: null, drifting: [], summaryNote: null, health: [], driftLimitVolts: null };
	}
	const sessionIds = sessionRows.map((s) => s.id);
	const restMinutes = REST_HOURS_AFTER_CHARGE * 60 - REST_SLACK_MINUTES;
	const nowIso = now.toISOString();

	// Per charge step and group it covers: currents (trapezoid), volts (end, CV), the readings around its start.
	const stepRows = (await db.execute(sql`
		with st as (
			select st.id, st.session_id, st.group_id, st.position, st.actual_start, st.actual_end,
				coalesce(st.actual_end, least(coalesce(c.ended_at, ${nowIso}::timestamptz), ${nowIso}::timestamptz)) as until_at,
				case when st.group_id is null then st.set_volts / ${pack.series} else st.set_volts end as cell_set
			from session_steps st join charge_sessions c on c.id = st.session_id
			where st.session_id = any(${sql.param(sessionIds)}::text[]) and st.role = any(${sql.param(CHARGE_ROLES)}::text[])
				and st.actual_start is not null
		), cover as (
			select st.*, g.id as gid from st join pack_groups g on g.pack_id = ${pack.id} and (st.group_id = g.id or st.group_id is null)
		)
		select c.session_id, c.id as step_id, c.gid as group_id, c.group_id as step_group_id, c.position,
			c.actual_start, c.actual_end, c.until_at,
			a.n_amps, a.amp_seconds, v.n_volts, v.end_volts, v.cv_group_at, p.n_pack_volts, p.cv_pack_at,
			b.volts as before_volts, b.amps as before_amps, b.taken_at as before_at,
			f.volts as after_volts, f.amps as after_amps, f.taken_at as after_at
		from cover c
		left join lateral (
			select count(*) as n_amps,
				sum(case when prev_at is null then amps * extract(epoch from taken_at - c.actual_start)
					else (amps + prev_amps) / 2 * extract(epoch from taken_at - prev_at) end)
				+ coalesce(max(case when next_at is null then amps * extract(epoch from c.until_at - taken_at) end), 0) as amp_seconds
			from (
				select taken_at, amps, lag(taken_at) over w as prev_at, lag(amps) over w as prev_amps, lead(taken_at) over w as next_at
				from (
					select r.taken_at, r.amps, r.id from readings r
					where r.session_id = c.session_id and r.group_id = c.gid and r.amps is not null
						and r.taken_at >= c.actual_start and r.taken_at <= c.until_at
					union all
					select r.taken_at, r.amps, r.id from readings r
					where c.group_id is null and r.session_id = c.session_id and r.group_id is null and r.amps is not null
						and r.taken_at >= c.actual_start and r.taken_at <= c.until_at
				) x
				window w as (order by taken_at, id)
			) y
		) a on true
		left join lateral (
			select count(*) as n_volts,
				(array_agg(r.volts order by r.taken_at desc, r.id desc))[1] as end_volts,
				min(r.taken_at) filter (where c.cell_set is not null and r.volts >= c.cell_set - ${CV_VOLTS_BAND}) as cv_group_at
			from readings r
			where r.session_id = c.session_id and r.group_id = c.gid and r.volts is not null
				and r.taken_at >= c.actual_start and r.taken_at <= c.until_at
		) v on true
		left join lateral (
			select count(*) as n_pack_volts,
				min(r.taken_at) filter (where c.cell_set is not null and r.volts / ${pack.series} >= c.cell_set - ${CV_VOLTS_BAND}) as cv_pack_at
			from readings r
			where c.group_id is null and r.session_id = c.session_id and r.group_id is null and r.volts is not null
				and r.taken_at >= c.actual_start and r.taken_at <= c.until_at
		) p on true
		left join lateral (
			select r.volts, r.amps, r.taken_at from readings r
			where r.session_id = c.session_id and r.group_id = c.gid and r.volts is not null
				and (r.amps is null or abs(r.amps) < ${REST_AMPS}) and r.taken_at < c.actual_start
			order by r.taken_at desc, r.id desc limit 1
		) b on true
		left join lateral (
			select r.volts, r.amps, r.taken_at from readings r
			where r.session_id = c.session_id and r.group_id = c.gid and r.volts is not null and r.amps is not null
				and r.taken_at >= c.actual_start and r.taken_at <= c.until_at
			order by r.taken_at, r.id limit 1
		) f on true
		order by c.session_id, c.gid, c.actual_start`)) as unknown as StepRow[];

	// Per session and group: the peak temperature and the rest readings before and after its charge.
	const spanRows = (await db.execute(sql`
		with span as (
			select st.session_id, g.id as gid, min(st.actual_start) as first_start, max(st.actual_end) as last_end,
				bool_or(st.actual_end is null) as running
			from session_steps st join pack_groups g on g.pack_id = ${pack.id} and (st.group_id = g.id or st.group_id is null)
			where st.session_id = any(${sql.param(sessionIds)}::text[]) and st.role = any(${sql.param(CHARGE_ROLES)}::text[])
				and st.actual_start is not null
			group by st.session_id, g.id
		)
		select s.session_id, s.gid as group_id, pk.peak_c, rb.volts as rest_before, ra.volts as rest_after
		from span s
		left join lateral (
			select max(r.temp_c) as peak_c from readings r where r.session_id = s.session_id and r.group_id = s.gid
		) pk on true
		left join lateral (
			select r.volts from readings r
			where r.session_id = s.session_id and r.group_id = s.gid and r.volts is not null
				and (r.amps is null or abs(r.amps) < ${REST_AMPS}) and r.taken_at < s.first_start
			order by r.taken_at desc, r.id desc limit 1
		) rb on true
		left join lateral (
			select r.volts from readings r
			where not s.running and r.session_id = s.session_id and r.group_id = s.gid and r.volts is not null
				and (r.amps is null or abs(r.amps) < ${REST_AMPS}) and r.taken_at >= s.last_end + make_interval(mins => ${restMinutes})
			order by r.taken_at, r.id limit 1
		) ra on true`)) as unknown as SpanRow[];

	const sessions = sessionRows.map((s) => ({
		id: s.id,
		name: s.name,
		kind: s.kind,
		status: s.status,
		target: s.target,
		targetVolts: s.target_volts === null ? null : Number(s.target_volts),
		startedAt: new Date(s.started_at),
		endedAt: s.ended_at === null ? null : new Date(s.ended_at),
		groups: figuresOf(s.id, groups, stepRows, spanRows, chemistry)
	}));
	const newest = sessionRows[sessionRows.length - 1];
	const limits = sessionLimits({
		// sessionLimits reads only the set volts and the stored limits of the session.
		session: { status: newest.status, setVolts: newest.set_volts, limits: newest.limits, readingIntervalMinutes: 60, startedAt: null, endedAt: null, plannedEnd: null },
		pack: { series: pack.series, parallel: pack.parallel, chemistry, cellCapacityAh: specRow.spec.capacityAh }
	});
	return { pack: packInfo, groups, sessions, ...judge(sessions, limits?.driftWarningVolts ?? null), health: healthOf(sessions, groups), driftLimitVolts: limits?.driftWarningVolts ?? null };
}

const num = (v: unknown) => (v === null || v === undefined ? null : Number(v));
const ms = (v: string | Date | null) => (v === null ? null : new Date(v).getTime());

/** Each group's figures in one session from the step and span rows (pure). */
function figuresOf(
	sessionId: string,
	groups: { id: string; index: number }[],
	stepRows: StepRow[],
	spanRows: SpanRow[],
	chemistry: Chemistry
): GroupFigures[] {
	return groups.flatMap((g) => {
		const steps = stepRows.filter((r) => r.session_id === sessionId && r.group_id === g.id);
		const span = spanRows.find((r) => r.session_id === sessionId && r.group_id === g.id);
		if (steps.length === 0 && !span) return [];
		// The last charge step: the running one, else the one that ended last.
		const last = [...steps].sort((a, b) => (ms(a.actual_end) ?? Infinity) - (ms(b.actual_end) ?? Infinity)).at(-1);

		let ah: number | null = 0;
		let ahMissing: string | null = null;
		for (const s of steps) {
			if (Number(s.n_amps) === 0 || s.amp_seconds === null) {
				ah = null;
				ahMissing = `not logged (no current in step ${s.position})`;
				break;
			}
			ah += Number(s.amp_seconds) / 3600;
		}
		if (steps.length === 0) [ah, ahMissing] = [null, 'not logged (no charge step)'];

		let cvHours: number | null = 0;
		for (const s of steps) {
			const usePack = s.step_group_id === null && Number(s.n_pack_volts) > 0;
			const hasVolts = usePack || Number(s.n_volts) > 0;
			if (!hasVolts) {
				cvHours = null;
				break;
			}
			const from = ms(usePack ? s.cv_pack_at : s.cv_group_at);
			if (from !== null) cvHours! += Math.max(0, ms(s.until_at)! - from) / HOUR;
		}
		if (steps.length === 0) cvHours = null;

		const restBefore = num(span?.rest_before);
		const restAfter = num(span?.rest_after);
		let capacityAh: number | null = null;
		let capacityNote: string | null = null;
		if (restBefore === null) capacityNote = 'no rest reading before the charge';
		else if (restAfter === null) capacityNote = 'no rest reading after the charge';
		else if (ah === null) capacityNote = 'no current logged';
		else {
			const c = capacityFromRestStates({ chemistry, restVoltsBefore: restBefore, restVoltsAfter: restAfter, ahBetween: ah });
			if (c.ok) capacityAh = c.capacityAh;
			else capacityNote = c.detail ?? c.reason;
		}

		// Charge resistance at the start of the group's own step (the first one that gives it).
		let resistanceMilliohms: number | null = null;
		for (const s of steps) {
			if (s.before_volts === null || s.after_volts === null || s.after_amps === null) continue;
			const r = chargeResistance(
				{ volts: Number(s.before_volts), amps: num(s.before_amps) ?? 0, takenAt: ms(s.before_at)! },
				{ volts: Number(s.after_volts), amps: Number(s.after_amps), takenAt: ms(s.after_at)! }
			);
			if (r.ok) {
				resistanceMilliohms = r.milliohms;
				break;
			}
		}

		return [
			{
				groupId: g.id,
				index: g.index,
				endVolts: num(last?.end_volts),
				restVoltsBefore: restBefore,
				restVolts: restAfter,
				ah,
				ahMissing,
				cvHours,
				peakTempC: num(span?.peak_c),
				capacityAh,
				capacityNote,
				resistanceMilliohms
			}
		];
	});
}

const mv = (volts: number) => Math.round(Math.abs(volts) * 1000);
const ahText = (ah: number) => `${Math.abs(ah).toFixed(2)}\u2009Ah`;

/** "a, b and c". */
const listed = (parts: string[]) => (parts.length < 2 ? parts.join('') : `${parts.slice(0, -1).join(', ')} and ${parts.at(-1)}`);

/** Mean of the others' values (those that have one); null without another. */
function othersMean(values: Map<number, number>, index: number): number | null {
	let sum = 0;
	let n = 0;
	for (const [i, v] of values) if (i !== index) (sum += v), n++;
	return n === 0 ? null : sum / n;
}

/**
 * The weakest group: in the newest ended session with figures, the group lowest by the first of
 * capacity, rest volts after, end volts (against the mean of the other groups), with every gap
 * behind it in words. Drifting groups: those the engine's compareSessions finds moved away from the
 * others by more than the drift warning limit since the last comparable done session.
 */
export function judge(sessions: HistorySession[], driftLimitVolts: number | null): { weakest: Finding | null; drifting: Finding[]; summaryNote: string | null } {
	const ended = sessions.filter((s) => s.status === 'done' || s.status === 'stopped');
	const session = [...ended].reverse().find((s) => s.groups.filter((g) => g.restVolts !== null || g.endVolts !== null).length >= 2);
	let weakest: Finding | null = null;
	let summaryNote: string | null = null;
	if (!session) summaryNote = 'No ended session has readings of two or more groups yet, so no group can be compared with the others.';
	else {
		const pick = (f: (g: GroupFigures) => number | null) => new Map(session.groups.flatMap((g) => (f(g) === null ? [] : [[g.index, f(g)!] as [number, number]])));
		const capacity = pick((g) => g.capacityAh);
		const rest = pick((g) => g.restVolts);
		const end = pick((g) => g.endVolts);
		const ah = pick((g) => g.ah);
		const basis = capacity.size >= 2 ? capacity : rest.size >= 2 ? rest : end;
		let lowest: number | null = null;
		let lowestGap = Infinity;
		for (const [i, v] of basis) {
			const gap = v - othersMean(basis, i)!;
			if (gap < lowestGap) [lowest, lowestGap] = [i, gap];
		}
		if (lowest !== null) {
			const parts: string[] = [];
			const gapOf = (m: Map<number, number>) => (m.has(lowest!) && m.size >= 2 ? m.get(lowest!)! - othersMean(m, lowest!)! : null);
			const c = gapOf(capacity);
			if (c !== null) parts.push(`its capacity counted ${ahText(c)} ${c < 0 ? 'less' : 'more'} than the mean of the others`);
			const a = gapOf(ah);
			if (a !== null && Math.abs(a) >= 0.005) parts.push(`it took ${ahText(a)} ${a < 0 ? 'less' : 'more'} than the mean of the others`);
			const r = gapOf(rest);
			if (r !== null) parts.push(mv(r) === 0 ? 'it rested level with the others' : `it rested ${mv(r)} mV ${r < 0 ? 'lower' : 'higher'} than the mean of the others`);
			const e = gapOf(end);
			if (e !== null) parts.push(mv(e) === 0 ? 'it ended the charge level with the others' : `it ended the charge ${mv(e)} mV ${e < 0 ? 'below' : 'above'} the mean of the others`);
			const when = `${session.name || 'the newest session'}`;
			// Within 5 mV (and under 1 % of capacity) nothing stands out: a meter's noise and the rest's spread.
			const standsOut = basis === capacity ? Math.abs(lowestGap) >= 0.01 * Math.abs(othersMean(capacity, lowest)!) : mv(lowestGap) > 5;
			weakest = standsOut
				? { index: lowest, text: `Group ${lowest} is the weakest: in “${when}” ${listed(parts)}.` }
				: { index: lowest, text: `No group stands apart in “${when}”: the lowest, group ${lowest}, is within the meter's spread (${listed(parts)}).` };
		}
	}

	const drifting: Finding[] = [];
	if (driftLimitVolts !== null) {
		const done = sessions.filter((s) => s.status === 'done' && s.endedAt);
		const snapshot = (s: HistorySession): SessionSnapshot | null => {
			const target = targetKey(s);
			if (target === null) return null;
			const endVolts: Record<string, number> = {};
			const restVolts: Record<string, number> = {};
			for (const g of s.groups) {
				if (g.endVolts !== null) endVolts[String(g.index)] = g.endVolts;
				if (g.restVolts !== null) restVolts[String(g.index)] = g.restVolts;
			}
			return { sessionId: s.id, endedAt: s.endedAt!, target, endVolts, restVolts };
		};
		const current = done.at(-1);
		const snap = current ? snapshot(current) : null;
		if (current && snap) {
			const earlier = done.slice(0, -1).flatMap((s) => snapshot(s) ?? []);
			const compared = compareSessions({ current: snap, earlier, driftLimitVolts });
			if (compared.ok) {
				for (const a of compared.alerts) drifting.push({ index: Number(a.groupId), text: `Group ${a.groupId} is drifting: ${a.message.replace(/^Group \d+ /, 'it ')}` });
			}
		}
	}
	return { weakest, drifting, summaryNote };
}

/** Each group's health: capacity, resistance, fade where the engine gives them; what is missing otherwise. */
function healthOf(sessions: HistorySession[], groups: { id: string; index: number }[]): GroupHealth[] {
	return groups.map((g) => {
		const mine = sessions.map((s, n) => ({ n, s, f: s.groups.find((x) => x.index === g.index) })).filter((x) => x.f);
		const notes: string[] = [];
		const withCapacity = mine.filter((x) => x.f!.capacityAh !== null);
		const lastCap = withCapacity.at(-1);
		if (!lastCap) {
			const why = mine.at(-1)?.f?.capacityNote;
			notes.push(`No capacity counted yet${why ? ` (${why})` : ''}: take a rest reading of each group before and after the next charge, with the current logged in between.`);
		}
		const lastR = mine.filter((x) => x.f!.resistanceMilliohms !== null).at(-1);
		if (!lastR) notes.push('No charge resistance yet: log the group’s volts just before its step starts, and its volts with the current within two minutes after.');
		let fade: string | null = null;
		if (withCapacity.length >= 3) {
			const result = chargesUntilFade(withCapacity.map((x) => ({ charge: x.n, capacityAh: x.f!.capacityAh! })));
			if (result.ok) {
				const trend = linearTrend(withCapacity.map((x) => ({ x: x.n, y: x.f!.capacityAh! })));
				const slope = trend.ok ? ` (${trend.slope.toFixed(3)} ± ${trend.slopeStdError.toFixed(3)}\u2009Ah per charge)` : '';
				fade = `At this rate group ${g.index} reaches 80 % of its first capacity in about ${Math.round(result.chargesFromLast)} charges${slope}.`;
			} else notes.push(`No fade forecast: ${result.detail ?? result.reason}`);
		} else {
			notes.push('No fade forecast yet: it needs a capacity counted at three charges or more.');
		}
		return {
			index: g.index,
			capacityAh: lastCap?.f!.capacityAh ?? null,
			capacityFrom: lastCap ? lastCap.s.name || 'a session' : null,
			resistanceMilliohms: lastR?.f!.resistanceMilliohms ?? null,
			resistanceFrom: lastR ? lastR.s.name || 'a session' : null,
			fade,
			notes
		};
	});
}
