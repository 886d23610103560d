/**
 * Chart data of a session, downsampled on the server so that a 100,000-reading session costs about
 * what a 1,000-reading one does.
 *
 * Two stages: PostgreSQL cuts the session's time span into 2·N buckets and keeps, per group and
 * bucket, the first, last, lowest and highest point of each quantity (M4 aggregation — everything a
 * line drawn at that width can show, and every spike's extreme), so at most 8·N points per line
 * leave the database whatever the session's size; then the `downsample` package's LTTB picks N of
 * them. A line with at most two readings per bucket reaches LTTB whole.
 */
import { error } from '@sveltejs/kit';
import { and, asc, eq, sql, type SQL } from 'drizzle-orm';
import { createLTTB } from 'downsample';
import { reestimate, type StepReading } from '$lib/engine';
import type { Member } from '../auth/permissions';
import { getCellSpec } from '../cell-specs';
import { db } from '../db';
import { chargeSessions, packGroups, packs, sessionSteps } from '../db/schema';
import { findVisibleSession, onEverySessionEvent, type VisibleSession } from './live';

/** [epoch ms, value]: compact on the wire, and chart.js reads it with `parsing: false` after mapping. */
export type SeriesPoint = [number, number];
export type SeriesLine = { key: string; label: string; points: SeriesPoint[] };

export type SeriesLimits = {
	overVoltsWarning?: number;
	overVoltsCritical?: number;
	underVoltsWarning?: number;
	tempWarningC?: number;
	tempCriticalC?: number;
	driftWarningVolts?: number;
	driftCriticalVolts?: number;
};

export type StepSeries = {
	id: string;
	position: number;
	groupIndex: number | null;
	role: string;
	channelLabel: string;
	startedAt: string;
	plannedEnd: string;
	/** Current the plan expects (A): CC at the step's amps, then the CV taper, from the plan's hours. */
	predictedAmps: SeriesPoint[];
	/** Logged current of the step (A). */
	actualAmps: SeriesPoint[];
	/** What the predicted line is, in words for the legend. */
	predictedBasis: string;
	/** The engine's time to full from the step's readings so far (reestimate), when it can tell. */
	reestimate: { phase: string; remainingHours: number; fullAt: string } | null;
};

export type SessionSeries = {
	points: number;
	from: string | null;
	to: string | null;
	/** Volts per cell, one line per group (and 'pack' for whole-pack readings ÷ series). */
	volts: SeriesLine[];
	/** Max − min of the groups' latest volts per cell, over time. */
	spread: SeriesPoint[];
	/** °C per group, and 'ambient'. */
	temps: SeriesLine[];
	limits: SeriesLimits;
	step: StepSeries | null;
};

export const DEFAULT_POINTS = 600;
export const MAX_POINTS = 2000;

const lttb = createLTTB<SeriesPoint>({ x: 0, y: 1 });

/** LTTB down to `points` (the library keeps the first and last point); shorter lines stay whole. */
export function downsampleLine(line: SeriesPoint[], points: number): SeriesPoint[] {
	if (line.length <= points) return line;
	return Array.from(lttb(line, points));
}

type Quantity = 'volts' | 'temp_c' | 'ambient_c' | 'amps';
type BucketRow = { groupId: string | null; b: number } & Record<string, number[] | null>;

/**
 * One row per (group, bucket) with `<q>_first`, `<q>_last` ([t, v]) and `<q>_min`, `<q>_max`
 * ([v, t]) for each quantity: PostgreSQL compares arrays element by element, so min/max of
 * [t, v] and [v, t] pick whole points in one pass over the index range.
 */
async function bucketed(where: SQL, quantities: Quantity[], buckets: number): Promise<BucketRow[]> {
	// The span from the (session, taken_at) index: two probes, so the big query is a single pass.
	const [span] = (await db.execute(sql`
		select date_part('epoch', min(taken_at)) * 1000 as lo, date_part('epoch', max(taken_at)) * 1000 as hi
		from readings where ${where}`)) as unknown as { lo: number | null; hi: number | null }[];
	if (span?.lo === null || span?.lo === undefined || span.hi === null) return [];
	const width = Math.max(span.hi - span.lo, 1);
	// date_part gives float8 directly (extract() is numeric since PostgreSQL 14, several times slower).
	const t = sql.raw(`(date_part('epoch', taken_at) * 1000)`);
	const aggregates = quantities.map((q) => {
		const col = sql.raw(q);
		const has = sql`${col} is not null`;
		return sql`min(array[${t}, ${col}]) filter (where ${has}) as ${sql.raw(`${q}_first`)},
			max(array[${t}, ${col}]) filter (where ${has}) as ${sql.raw(`${q}_last`)},
			min(array[${col}, ${t}]) filter (where ${has}) as ${sql.raw(`${q}_min`)},
			max(array[${col}, ${t}]) filter (where ${has}) as ${sql.raw(`${q}_max`)}`;
	});
	const rows = await db.execute(sql`
		select group_id as "groupId",
			least(width_bucket(${t} - ${span.lo}::float8, 0, ${width}::float8, ${buckets}::int), ${buckets}::int) as b,
			${sql.join(aggregates, sql`, `)}
		from readings where ${where}
		group by group_id, b`);
	return (rows as unknown as BucketRow[]).sort((a, b) => a.b - b.b);
}

/** The M4 points of one quantity from bucket rows, in time order, without repeats. */
function m4Points(rows: BucketRow[], q: Quantity, scale = 1): SeriesPoint[] {
	const seen = new Set<number>();
	const out: SeriesPoint[] = [];
	for (const row of rows) {
		const first = row[`${q}_first`];
		if (!first) continue;
		const last = row[`${q}_last`]!;
		const min = row[`${q}_min`]!;
		const max = row[`${q}_max`]!;
		const candidates: SeriesPoint[] = [
			[first[0], first[1]],
			[min[1], min[0]],
			[max[1], max[0]],
			[last[0], last[1]]
		];
		candidates.sort((a, b) => a[0] - b[0]);
		for (const [t, v] of candidates) {
			if (seen.has(t)) continue;
			seen.add(t);
			out.push([t, v / scale]);
		}
	}
	return out.sort((a, b) => a[0] - b[0]);
}

/**
 * Max − min of the groups' latest volts per cell, one point per bucket (at its last reading), from
 * the moment two groups have a reading. A group read more than once in a bucket counts with its
 * highest and lowest value there, so the point is the largest spread the bucket may have had (a
 * short spike is never averaged away); with at most one reading per group in a bucket it is exact.
 */
function spreadOverTime(rows: BucketRow[]): SeriesPoint[] {
	const latest = new Map<string, number>();
	const out: SeriesPoint[] = [];
	let i = 0;
	while (i < rows.length) {
		const b = rows[i].b;
		let at = -Infinity;
		const range = new Map<string, [number, number]>();
		for (; i < rows.length && rows[i].b === b; i++) {
			const row = rows[i];
			if (!row.volts_last || row.groupId === null) continue;
			range.set(row.groupId, [row.volts_min![0], row.volts_max![0]]);
			latest.set(row.groupId, row.volts_last[1]);
			at = Math.max(at, row.volts_last[0]);
		}
		if (at === -Infinity || latest.size < 2) continue;
		let hi = -Infinity;
		let lo = Infinity;
		for (const [groupId, value] of latest) {
			const [min, max] = range.get(groupId) ?? [value, value];
			hi = Math.max(hi, max);
			lo = Math.min(lo, min);
		}
		out.push([at, hi - lo]);
	}
	return out;
}

const round = (n: number, digits: number) => Math.round(n * 10 ** digits) / 10 ** digits;

/**
 * The current the plan expects over the step: the step's amps through pre-charge and CC, then the
 * CV taper I(t) = I·e^(−t/τ) falling to the termination current at the end of the planned CV hours
 * (τ = cvHours / ln(I / Iterm), the engine's exponential taper).
 */
export function plannedCurrent(
	start: number,
	step: { amps: number; preHours: number; ccHours: number; cvHours: number },
	terminationAmps: number,
	samples = 40
): SeriesPoint[] {
	const hour = 3_600_000;
	const { amps } = step;
	const ccEnd = start + (step.preHours + step.ccHours) * hour;
	const points: SeriesPoint[] = [
		[start, amps],
		[ccEnd, amps]
	];
	if (step.cvHours > 0 && amps > terminationAmps && terminationAmps > 0) {
		const tau = step.cvHours / Math.log(amps / terminationAmps);
		for (let i = 1; i <= samples; i++) {
			const h = (step.cvHours * i) / samples;
			points.push([ccEnd + h * hour, round(amps * Math.exp(-h / tau), 4)]);
		}
	}
	return points;
}

function hoursText(h: number): string {
	const minutes = Math.round(h * 60);
	return minutes < 60 ? `${minutes} min` : `${Math.floor(minutes / 60)} h ${minutes % 60} min`;
}

async function runningStep(
	member: Member,
	session: { id: string; packId: string },
	pack: { series: number; parallel: number; cellSpecId: string },
	points: number
): Promise<StepSeries | null> {
	const [step] = await db
		.select({ step: sessionSteps, groupIndex: packGroups.index })
		.from(sessionSteps)
		.leftJoin(packGroups, eq(packGroups.id, sessionSteps.groupId))
		.where(and(eq(sessionSteps.sessionId, session.id), eq(sessionSteps.status, 'running')))
		.orderBy(asc(sessionSteps.position))
		.limit(1);
	if (!step || !step.step.actualStart) return null;
	const s = step.step;
	const start = s.actualStart!;
	const scale = s.groupId === null ? pack.series : 1;
	const groupMatch = s.groupId === null ? sql`group_id is null` : sql`group_id = ${s.groupId}`;
	const where = sql`session_id = ${session.id} and ${groupMatch} and taken_at >= ${start.toISOString()}::timestamptz`;
	const [rows, recent] = await Promise.all([
		bucketed(where, ['amps'], points * 2),
		db.execute(sql`select taken_at as "at", volts, amps from readings
			where ${where} and volts is not null and amps is not null order by taken_at desc limit 200`)
	]);
	const actualAmps = downsampleLine(m4Points(rows, 'amps'), points);

	const charging = (s.role === 'charge' || s.role === 'top-up') && (s.amps ?? 0) > 0;
	let predictedAmps: SeriesPoint[] = [];
	let predictedBasis = 'No planned current for this step.';
	let estimate: StepSeries['reestimate'] = null;
	if (charging) {
		const spec = await getCellSpec(member, pack.cellSpecId);
		const groupAh = spec.capacityAh * pack.parallel;
		const terminationAmps = spec.chemistry.terminationC * groupAh;
		predictedAmps = plannedCurrent(start.getTime(), { amps: s.amps!, preHours: s.preHours, ccHours: s.ccHours, cvHours: s.cvHours }, terminationAmps);
		predictedBasis =
			`Planned current: ${round(s.amps!, 2)} A (CC) for ${hoursText(s.preHours + s.ccHours)}, ` +
			`then CV tapering to ${round(terminationAmps, 2)} A over ${hoursText(s.cvHours)} — the plan's figures from the engine.`;
		const readings: StepReading[] = (recent as unknown as { at: Date | string; volts: number; amps: number }[])
			.map((r) => ({ at: new Date(r.at), volts: r.volts / scale, amps: r.amps }))
			.reverse();
		if (readings.length > 0 && s.setVolts) {
			const now = new Date();
			const result = reestimate({
				chemistry: spec.chemistry,
				capacityAh: groupAh,
				setVolts: s.setVolts / scale,
				amps: s.amps!,
				terminationAmps,
				readings,
				now
			});
			if (result.ok) {
				estimate = {
					phase: result.phase,
					remainingHours: result.remainingHours,
					fullAt: new Date(now.getTime() + result.remainingHours * 3_600_000).toISOString()
				};
			}
		}
	}
	return {
		id: s.id,
		position: s.position,
		groupIndex: step.groupIndex,
		role: s.role,
		channelLabel: s.channelLabel,
		startedAt: start.toISOString(),
		plannedEnd: new Date(start.getTime() + (s.expectedEnd.getTime() - s.expectedStart.getTime())).toISOString(),
		predictedAmps,
		actualAmps,
		predictedBasis,
		reestimate: estimate
	};
}

/**
 * Chart data per (session, points), kept until the session's next event (every instance listens,
 * so each drops its own copy when a reading, step or status change commits) or for a minute at
 * most (an event lost while the LISTEN connection reconnects). Viewers asking at once share one
 * computation; the cost of a long session is paid once per change, not once per viewer.
 */
const CACHE_MS = 60_000;
const CACHE_ENTRIES = 100;
const cache = new Map<string, { at: number; value: Promise<SessionSeries> }>();
let cacheListening: Promise<boolean> | undefined;

function forgetSession(sessionId: string) {
	for (const key of [...cache.keys()]) if (key.startsWith(`${sessionId}:`)) cache.delete(key);
}

/** The session's chart data with at most `points` points per line; 404 when the member may not see it. */
export async function sessionSeries(member: Member, sessionId: string, points = DEFAULT_POINTS): Promise<SessionSeries> {
	const visible = await findVisibleSession(member, sessionId);
	if (!visible) error(404, 'Not found');
	const n = Math.max(10, Math.min(MAX_POINTS, Math.floor(points)));
	cacheListening ??= onEverySessionEvent((event) => forgetSession(event.sessionId));
	if (!(await cacheListening)) {
		cacheListening = undefined;
		return computeSeries(member, visible, n);
	}
	const key = `${visible.id}:${n}`;
	const hit = cache.get(key);
	if (hit && Date.now() - hit.at < CACHE_MS) return hit.value;
	const entry = { at: Date.now(), value: computeSeries(member, visible, n) };
	cache.set(key, entry);
	entry.value.catch(() => cache.get(key) === entry && cache.delete(key));
	if (cache.size > CACHE_ENTRIES) cache.delete(cache.keys().next().value!);
	return entry.value;
}

async function computeSeries(member: Member, visible: VisibleSession, n: number): Promise<SessionSeries> {
	const [[row], groups, rows] = await Promise.all([
		db
			.select({ limits: chargeSessions.limits, series: packs.series, parallel: packs.parallel, cellSpecId: packs.cellSpecId })
			.from(chargeSessions)
			.innerJoin(packs, eq(packs.id, chargeSessions.packId))
			.where(eq(chargeSessions.id, visible.id)),
		db.select({ id: packGroups.id, index: packGroups.index }).from(packGroups).where(eq(packGroups.packId, visible.packId)),
		bucketed(sql`session_id = ${visible.id}`, ['volts', 'temp_c', 'ambient_c'], n * 2)
	]);
	const indexOf = new Map(groups.map((g) => [g.id, g.index]));
	const lineKeys = [...new Set(rows.map((r) => r.groupId))].sort(
		(a, b) => (a === null ? Infinity : indexOf.get(a)!) - (b === null ? Infinity : indexOf.get(b)!)
	);
	const label = (groupId: string | null) => (groupId === null ? 'Whole pack (per cell)' : `G${indexOf.get(groupId)}`);
	const volts: SeriesLine[] = [];
	const temps: SeriesLine[] = [];
	for (const groupId of lineKeys) {
		const mine = rows.filter((r) => r.groupId === groupId);
		// Whole-pack readings are pack volts: ÷ groups in series for a per-cell chart.
		const v = m4Points(mine, 'volts', groupId === null ? row.series : 1);
		if (v.length) volts.push({ key: groupId ?? 'pack', label: label(groupId), points: downsampleLine(v, n) });
		const t = m4Points(mine, 'temp_c');
		if (t.length) temps.push({ key: groupId ?? 'pack', label: label(groupId), points: downsampleLine(t, n) });
	}
	const ambient = m4Points(rows, 'ambient_c');
	if (ambient.length) temps.push({ key: 'ambient', label: 'Ambient', points: downsampleLine(ambient, n) });
	let lo = Infinity;
	let hi = -Infinity;
	for (const line of [...volts, ...temps]) {
		if (!line.points.length) continue;
		lo = Math.min(lo, line.points[0][0]);
		hi = Math.max(hi, line.points[line.points.length - 1][0]);
	}
	const limitsKeys: (keyof SeriesLimits)[] = [
		'overVoltsWarning',
		'overVoltsCritical',
		'underVoltsWarning',
		'tempWarningC',
		'tempCriticalC',
		'driftWarningVolts',
		'driftCriticalVolts'
	];
	const limits: SeriesLimits = {};
	for (const key of limitsKeys) if (typeof row.limits[key] === 'number') limits[key] = row.limits[key];
	return {
		points: n,
		from: lo === Infinity ? null : new Date(lo).toISOString(),
		to: hi === -Infinity ? null : new Date(hi).toISOString(),
		volts,
		spread: downsampleLine(spreadOverTime(rows), n),
		temps,
		limits,
		step: await runningStep(member, visible, row, n)
	};
}
