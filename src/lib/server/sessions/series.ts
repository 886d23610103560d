/**
 * Chart data of a session, downsampled on the server so that a 100,000-reading session costs about
 * what a 1,000-reading one does.
 *
 * Two stages: the session's time span is cut into at most 2·N buckets of a fixed, epoch-aligned
 * width, keeping per group and bucket the first, last, lowest and highest point of each quantity
 * (M4 aggregation — everything a line drawn at that width can show, and every spike's extreme), so
 * at most 8·N points per line whatever the session's size; then the `downsample` package's LTTB
 * picks N of them. A line with at most two readings per bucket reaches LTTB whole. The buckets are
 * built by PostgreSQL once and then kept in the process and updated with only the readings that
 * arrived since (see `SeriesState`), so the refresh after a new reading does not grow with the session.
 */
import { error } from '@sveltejs/kit';
import { and, asc, eq, sql, type SQL } from 'drizzle-orm';
import { createLTTB } from 'downsample';
import { endSocAtSetVolts, reestimate, type StepReading } from '$lib/engine';
import type { Member } from '../auth/permissions';
import { getCellSpec } from '../cell-specs';
import { db } from '../db';
import { chargeSessions, packGroups, packs, sessionSteps } from '../db/schema';
import { onEverySessionEvent } from './live';
import { sessionForMember, type ReadingSessionHead as VisibleSession } from './readings';

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
	/** Every running step (several channels run side by side), in the plan's order. */
	steps: StepSeries[];
};

export const DEFAULT_POINTS = 600;
export const MAX_POINTS = 2000;

const lttb = createLTTB<SeriesPoint>({ x: 0, y: 1 });

/**
 * Values to the resolution a bench meter gives, so the answer carries no float noise: volts to
 * 0.1 mV, amps to 1 mA, °C to 0.01. A chart of a long session is most of its bytes.
 */
const VOLT_DIGITS = 4;
const AMP_DIGITS = 3;
const DEGREE_DIGITS = 2;
function roundPoints(points: SeriesPoint[], digits: number): SeriesPoint[] {
	const f = 10 ** digits;
	return points.map(([t, v]) => [t, Math.round(v * f) / f]);
}

/** The answer, and the same as JSON text. */
type SeriesAnswer = { series: SessionSeries; json: string };

/** LTTB down to `points` (the library keeps the first and last point); shorter lines stay whole. */
export function downsampleLine(line: SeriesPoint[], points: number): SeriesPoint[] {
	if (line.length <= points) return line;
	return Array.from(lttb(line, points));
}

type Quantity = 'volts' | 'temp_c' | 'ambient_c' | 'amps';
type BucketRow = { groupId: string | null; b: number } & Record<string, number[] | null>;

/**
 * Buckets have a fixed width from a ladder, BASE_MS·2^level, aligned to the epoch: the width depends
 * on the time span only (the smallest level at which the span fits in `cap` buckets), never on how
 * many readings there are, so a bucket's content is the same whether it was built in one query or
 * folded in reading by reading. When the span outgrows the cap, neighbouring pairs merge exactly.
 */
const BASE_MS = 1000;
/** Per quantity: first [t, v], last [t, v], min [v, t], max [v, t]; NaN while the bucket has none. */
const SLOTS = 8;

const secondOf = (t: number) => Math.floor(t / BASE_MS);
const bucketOf = (t: number, level: number) => Math.floor(secondOf(t) / 2 ** level);

/**
 * Folds one point into a bucket's slots for one quantity. Ties break as PostgreSQL's min/max of
 * arrays do (first = least [t, v], min = least [v, t]…), so the result does not depend on order.
 */
function foldPoint(a: Float64Array, o: number, t: number, v: number) {
	if (Number.isNaN(a[o])) {
		a[o] = a[o + 2] = a[o + 5] = a[o + 7] = t;
		a[o + 1] = a[o + 3] = a[o + 4] = a[o + 6] = v;
		return;
	}
	if (t < a[o] || (t === a[o] && v < a[o + 1])) (a[o] = t), (a[o + 1] = v);
	if (t > a[o + 2] || (t === a[o + 2] && v > a[o + 3])) (a[o + 2] = t), (a[o + 3] = v);
	if (v < a[o + 4] || (v === a[o + 4] && t < a[o + 5])) (a[o + 4] = v), (a[o + 5] = t);
	if (v > a[o + 6] || (v === a[o + 6] && t > a[o + 7])) (a[o + 6] = v), (a[o + 7] = t);
}

/**
 * First, last, lowest and highest point of each quantity per group and bucket (M4 aggregation:
 * everything a line drawn at that width can show, and every spike's extreme), for one set of
 * readings. At most `cap` buckets per group whatever the number of readings.
 */
export class Buckets {
	level = 0;
	lo = Infinity;
	hi = -Infinity;
	readonly groups = new Map<string | null, Map<number, Float64Array>>();
	/**
	 * Change counters: a group's line of a quantity is unchanged while max(its stamp, reset) is; a
	 * quantity of all groups (ambient, the spread of volts) while max(the quantity's stamp, reset) is.
	 */
	private clock = 0;
	private reset = 0;
	private readonly stamps = new Map<string | null, number[]>();
	private readonly quantityStamps: number[];
	/** The spread as last worked out, and the earliest bucket whose volts changed since (spread()). */
	private spreadKept: KeptSpread | null = null;
	private voltsDirtyFrom = Infinity;

	constructor(
		readonly quantities: Quantity[],
		readonly cap: number
	) {
		this.quantityStamps = quantities.map(() => 0);
	}

	/** The smallest level at which [lo, hi] fits in `cap` buckets. */
	levelFor(lo: number, hi: number): number {
		let level = 0;
		while (bucketOf(hi, level) - bucketOf(lo, level) + 1 > this.cap) level++;
		return level;
	}

	private bucket(groupId: string | null, b: number): Float64Array {
		let group = this.groups.get(groupId);
		if (!group) this.groups.set(groupId, (group = new Map()));
		let a = group.get(b);
		if (!a) group.set(b, (a = new Float64Array(this.quantities.length * SLOTS).fill(NaN)));
		return a;
	}

	/** Halves the resolution: buckets 2i and 2i+1 become bucket i; their extremes merge exactly. */
	private coarsen() {
		this.level++;
		this.reset = ++this.clock;
		this.spreadKept = null;
		for (const [groupId, group] of this.groups) {
			const merged = new Map<number, Float64Array>();
			this.groups.set(groupId, merged);
			for (const [b, a] of group) {
				const into = merged.get(Math.floor(b / 2));
				if (!into) merged.set(Math.floor(b / 2), a);
				else for (let q = 0; q < this.quantities.length; q++) mergeSlots(into, a, q * SLOTS);
			}
		}
	}

	/** One reading; `values` in the order of `quantities` (null: not read). */
	fold(groupId: string | null, t: number, values: (number | null)[]) {
		this.lo = Math.min(this.lo, t);
		this.hi = Math.max(this.hi, t);
		const need = this.levelFor(this.lo, this.hi);
		while (this.level < need) this.coarsen();
		if (values.every((v) => v === null)) return;
		const stamp = ++this.clock;
		let stamps = this.stamps.get(groupId);
		if (!stamps) this.stamps.set(groupId, (stamps = this.quantities.map(() => 0)));
		const b = bucketOf(t, this.level);
		const a = this.bucket(groupId, b);
		values.forEach((v, q) => {
			if (v === null) return;
			foldPoint(a, q * SLOTS, t, v);
			stamps[q] = this.quantityStamps[q] = stamp;
			if (this.quantities[q] === 'volts' && b < this.voltsDirtyFrom) this.voltsDirtyFrom = b;
		});
	}

	/** Replaces the content with what PostgreSQL aggregated at `level` (see `bucketsFromSql`). */
	load(lo: number, hi: number, level: number, rows: BucketRow[]) {
		this.groups.clear();
		this.reset = ++this.clock;
		this.spreadKept = null;
		this.lo = lo;
		this.hi = hi;
		this.level = level;
		for (const row of rows) {
			this.quantities.forEach((q, i) => {
				const [first, last, min, max] = [row[`${q}_first`], row[`${q}_last`], row[`${q}_min`], row[`${q}_max`]];
				if (!first || !last || !min || !max) return;
				this.bucket(row.groupId, row.b).set([first[0], first[1], last[0], last[1], min[0], min[1], max[0], max[1]], i * SLOTS);
			});
		}
	}

	/** Changes when the group's quantity (or the quantity of any group, with no group) may have changed. */
	stamp(q: Quantity, groupId?: string | null): number {
		const i = this.quantities.indexOf(q);
		const stamp = groupId === undefined ? this.quantityStamps[i] : (this.stamps.get(groupId)?.[i] ?? 0);
		return Math.max(stamp ?? 0, this.reset);
	}

	private sortedKeys(groupId: string | null): number[] {
		return [...(this.groups.get(groupId)?.keys() ?? [])].sort((a, b) => a - b);
	}

	/**
	 * The M4 points of one group's quantity in time order: per bucket its first, lowest, highest
	 * and last point, once each (buckets do not overlap in time; two readings at one moment are two
	 * points). Values ÷ `scale`.
	 */
	points(groupId: string | null, q: Quantity, scale = 1): SeriesPoint[] {
		const group = this.groups.get(groupId);
		const o = this.quantities.indexOf(q) * SLOTS;
		const out: SeriesPoint[] = [];
		if (!group || o < 0) return out;
		// The bucket's first, lowest, highest and last (time, value), sorted by time in place (an
		// insertion sort: stable, and no arrays made per bucket — this runs for every bucket of a line).
		const ts = new Float64Array(4);
		const vs = new Float64Array(4);
		for (const b of this.sortedKeys(groupId)) {
			const a = group.get(b)!;
			if (Number.isNaN(a[o])) continue;
			ts[0] = a[o];
			vs[0] = a[o + 1];
			ts[1] = a[o + 5];
			vs[1] = a[o + 4];
			ts[2] = a[o + 7];
			vs[2] = a[o + 6];
			ts[3] = a[o + 2];
			vs[3] = a[o + 3];
			for (let i = 1; i < 4; i++) {
				const t = ts[i];
				const v = vs[i];
				let j = i - 1;
				for (; j >= 0 && ts[j] > t; j--) {
					ts[j + 1] = ts[j];
					vs[j + 1] = vs[j];
				}
				ts[j + 1] = t;
				vs[j + 1] = v;
			}
			// Once each: the same reading is often the bucket's first and lowest, say. Two readings
			// taken at the same moment both stay (a spike must not lose to the reading beside it).
			const from = out.length;
			for (let i = 0; i < 4; i++) {
				const t = ts[i];
				const v = vs[i] / scale;
				let seen = false;
				for (let k = from; k < out.length; k++) if (out[k][0] === t && out[k][1] === v) seen = true;
				if (!seen) out.push([t, v]);
			}
		}
		return out;
	}

	/** One quantity of every group as one line (ambient temperature): the first point at a time wins. */
	pointsOfAll(q: Quantity): SeriesPoint[] {
		const seen = new Set<number>();
		const out: SeriesPoint[] = [];
		for (const groupId of this.groups.keys()) {
			for (const p of this.points(groupId, q)) {
				if (seen.has(p[0])) continue;
				seen.add(p[0]);
				out.push(p);
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
	spread(): SeriesPoint[] {
		const o = this.quantities.indexOf('volts') * SLOTS;
		if (o < 0 || this.lo > this.hi) return [];
		const groups = [...this.groups].filter(([groupId]) => groupId !== null).map(([, group]) => group);
		const first = bucketOf(this.lo, this.level);
		const last = bucketOf(this.hi, this.level);
		// A new reading changes the spread from its own bucket on: the scan resumes at the checkpoint
		// before it, with the groups' latest volts as they were there, and keeps the points before.
		let kept = this.spreadKept;
		let from = first;
		let latest: Float64Array;
		let groupsRead: number;
		if (kept && kept.first === first && kept.groups === groups.length && Math.min(this.voltsDirtyFrom, kept.last + 1) > first) {
			const resume = Math.min(this.voltsDirtyFrom, kept.last + 1);
			if (resume > last) return kept.out.slice();
			// The checkpoint at or before it that a scan has passed (buckets past `kept.last` are new).
			from = first + Math.floor((Math.min(resume, kept.last) - first) / SPREAD_CHECKPOINT) * SPREAD_CHECKPOINT;
			const checkpoint = kept.checkpoints.get(from)!;
			latest = checkpoint.latest.slice();
			groupsRead = checkpoint.groupsRead;
			for (const b of kept.checkpoints.keys()) if (b > from) kept.checkpoints.delete(b);
			let keep = kept.out.length;
			while (keep > 0 && kept.outBucket[keep - 1] >= from) keep--;
			kept.out.length = kept.outBucket.length = keep;
		} else {
			kept = { first, last, groups: groups.length, out: [], outBucket: [], checkpoints: new Map() };
			latest = new Float64Array(groups.length).fill(NaN);
			groupsRead = 0;
		}
		const { out, outBucket, checkpoints } = kept;
		// Per group: its latest volts so far, and its lowest and highest in the current bucket.
		const low = new Float64Array(groups.length);
		const high = new Float64Array(groups.length);
		// Every bucket in the span, in order: at most `cap` of them.
		for (let b = from; b <= last; b++) {
			if ((b - first) % SPREAD_CHECKPOINT === 0) checkpoints.set(b, { latest: latest.slice(), groupsRead });
			let at = -Infinity;
			for (let g = 0; g < groups.length; g++) {
				const a = groups[g].get(b);
				if (!a || Number.isNaN(a[o])) {
					low[g] = high[g] = latest[g];
					continue;
				}
				if (Number.isNaN(latest[g])) groupsRead++;
				low[g] = a[o + 4];
				high[g] = a[o + 6];
				latest[g] = a[o + 3];
				if (a[o + 2] > at) at = a[o + 2];
			}
			if (at === -Infinity || groupsRead < 2) continue;
			let hi = -Infinity;
			let lo = Infinity;
			for (let g = 0; g < groups.length; g++) {
				if (Number.isNaN(latest[g])) continue;
				if (high[g] > hi) hi = high[g];
				if (low[g] < lo) lo = low[g];
			}
			out.push([at, hi - lo]);
			outBucket.push(b);
		}
		kept.last = last;
		this.spreadKept = kept;
		this.voltsDirtyFrom = Infinity;
		return out.slice();
	}

	get size(): number {
		let n = 0;
		for (const group of this.groups.values()) n += group.size;
		return n;
	}
}

/** The spread as last worked out: its points (and their buckets) and, every SPREAD_CHECKPOINT buckets, the scan's state. */
type KeptSpread = {
	first: number;
	last: number;
	groups: number;
	out: SeriesPoint[];
	outBucket: number[];
	checkpoints: Map<number, { latest: Float64Array; groupsRead: number }>;
};
const SPREAD_CHECKPOINT = 64;

function mergeSlots(into: Float64Array, from: Float64Array, o: number) {
	if (Number.isNaN(from[o])) return;
	foldPoint(into, o, from[o], from[o + 1]);
	foldPoint(into, o, from[o + 2], from[o + 3]);
	foldPoint(into, o, from[o + 5], from[o + 4]);
	foldPoint(into, o, from[o + 7], from[o + 6]);
}

// date_part gives float8 directly (extract() is numeric since PostgreSQL 14, several times slower);
// the same expression feeds the one-query build and the reading-by-reading catch-up, so both see
// the same numbers and cut them into the same buckets.
const T = sql.raw(`(date_part('epoch', taken_at) * 1000)`);

type Runner = Pick<typeof db, 'execute'>;

/**
 * Builds `into` from all readings matching `where` in one pass: the span from the (session,
 * taken_at) index (two probes), then one row per (group, bucket) with `<q>_first`, `<q>_last`
 * ([t, v]) and `<q>_min`, `<q>_max` ([v, t]): PostgreSQL compares arrays element by element, so
 * min/max of [t, v] and [v, t] pick whole points. Answers the readings' count and highest id.
 */
async function bucketsFromSql(run: Runner, into: Buckets, where: SQL): Promise<{ count: number; maxId: bigint }> {
	const [span] = (await run.execute(sql`
		select min(${T}) as lo, max(${T}) as hi, count(*)::int as count, coalesce(max(id), 0)::text as "maxId"
		from readings where ${where}`)) as unknown as { lo: number | null; hi: number | null; count: number; maxId: string }[];
	if (span.lo === null || span.hi === null) {
		into.load(Infinity, -Infinity, 0, []);
		return { count: 0, maxId: BigInt(span.maxId) };
	}
	const level = into.levelFor(span.lo, span.hi);
	const aggregates = into.quantities.map((q) => {
		const col = sql.raw(q);
		const has = sql`${col} is not null`;
		return sql`min(array[${T}, ${col}]) filter (where ${has}) as ${sql.raw(`${q}_first`)},
			max(array[${T}, ${col}]) filter (where ${has}) as ${sql.raw(`${q}_last`)},
			min(array[${col}, ${T}]) filter (where ${has}) as ${sql.raw(`${q}_min`)},
			max(array[${col}, ${T}]) filter (where ${has}) as ${sql.raw(`${q}_max`)}`;
	});
	const rows = await run.execute(sql`
		select group_id as "groupId", floor(floor(${T} / ${BASE_MS}::float8) / ${2 ** level}::float8) as b,
			${sql.join(aggregates, sql`, `)}
		from readings where ${where}
		group by group_id, b`);
	into.load(span.lo, span.hi, level, rows as unknown as BucketRow[]);
	return { count: span.count, maxId: BigInt(span.maxId) };
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

async function runningSteps(
	member: Member,
	session: { id: string; packId: string },
	pack: { series: number; parallel: number; cellSpecId: string },
	points: number,
	state: SeriesState
): Promise<StepSeries[]> {
	const running = await db
		.select({ step: sessionSteps, groupIndex: packGroups.index })
		.from(sessionSteps)
		.leftJoin(packGroups, eq(packGroups.id, sessionSteps.groupId))
		.where(and(eq(sessionSteps.sessionId, session.id), eq(sessionSteps.status, 'running')))
		.orderBy(asc(sessionSteps.position));
	const started = running.filter((r) => r.step.actualStart !== null);
	// Buckets of steps that no longer run are dropped.
	const keys = new Set(started.map((r) => stepKey(r.step)));
	for (const key of [...state.steps.keys()]) if (!keys.has(key)) state.steps.delete(key);
	return Promise.all(started.map((r) => stepSeries(member, session, pack, points, state, r)));
}

const stepKey = (s: { id: string; actualStart: Date | null; groupId: string | null }) => `${s.id}:${s.actualStart?.getTime()}:${s.groupId}`;

async function stepSeries(
	member: Member,
	session: { id: string; packId: string },
	pack: { series: number; parallel: number; cellSpecId: string },
	points: number,
	state: SeriesState,
	step: { step: typeof sessionSteps.$inferSelect; groupIndex: number | null }
): Promise<StepSeries> {
	const s = step.step;
	const start = s.actualStart!;
	const scale = s.groupId === null ? pack.series : 1;
	const groupMatch = s.groupId === null ? sql`group_id is null` : sql`group_id = ${s.groupId}`;
	const where = sql`session_id = ${session.id} and ${groupMatch} and taken_at >= ${start.toISOString()}::timestamptz`;
	const [buckets, recent] = await Promise.all([
		stepBuckets(state, { key: stepKey(s), groupId: s.groupId, from: start.getTime() }, where),
		db.execute(sql`select taken_at as "at", volts, amps from readings
			where ${where} and volts is not null and amps is not null order by taken_at desc limit 200`)
	]);
	const actualAmps = roundPoints(downsampleLine(buckets.points(s.groupId, 'amps'), points), AMP_DIGITS);

	const charging = (s.role === 'charge' || s.role === 'top-up') && (s.amps ?? 0) > 0;
	let predictedAmps: SeriesPoint[] = [];
	let predictedBasis = 'No planned current for this step.';
	let estimate: StepSeries['reestimate'] = null;
	if (charging) {
		const spec = await getCellSpec(member, pack.cellSpecId);
		const groupAh = spec.capacityAh * pack.parallel;
		const terminationAmps = spec.chemistry.terminationC * groupAh;
		predictedAmps = roundPoints(
			plannedCurrent(start.getTime(), { amps: s.amps!, preHours: s.preHours, ccHours: s.ccHours, cvHours: s.cvHours }, terminationAmps),
			AMP_DIGITS
		);
		const cc = `Planned current: ${round(s.amps!, 2)} A (CC) for ${hoursText(s.preHours + s.ccHours)}, `;
		predictedBasis =
			s.amps! <= terminationAmps
				? cc +
					`done on reaching the set voltage: ${round(s.amps!, 2)} A is already at or below the ${round(terminationAmps, 2)} A ` +
					`cut-off, so there is no CV taper — the plan's figures from the engine.`
				: cc + `then CV tapering to ${round(terminationAmps, 2)} A over ${hoursText(s.cvHours)} — the plan's figures from the engine.`;
		const readings: StepReading[] = (recent as unknown as { at: Date | string; volts: number; amps: number }[])
			.map((r) => ({ at: new Date(r.at), volts: r.volts / scale, amps: r.amps }))
			.reverse();
		if (readings.length > 0 && s.setVolts) {
			const now = new Date();
			// The step's start state from the plan (its end state less the amp-hours it puts in), so CC
			// counts the charge in, as the run screen does (run-view.ts).
			const startSoc = endSocAtSetVolts(spec.chemistry, s.setVolts / scale) - s.ah / groupAh;
			const result = reestimate({
				chemistry: spec.chemistry,
				capacityAh: groupAh,
				setVolts: s.setVolts / scale,
				amps: s.amps!,
				terminationAmps,
				readings,
				now,
				...(s.ah > 0 && startSoc >= 0 ? { counted: { startSoc, startedAt: start } } : {})
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
 * The bucket aggregates of one (session, points), kept in the process and brought up to date
 * incrementally: after a build (one aggregate query), each refresh reads only the readings whose id
 * is above a cursor and folds them into their bucket — wherever their time falls — so a refresh
 * costs the readings that arrived, not the session's size. Min, max, first and last fold and merge
 * exactly, and folding a reading twice changes nothing, so the catch-up may safely re-read.
 *
 * The cursor: ids come from an identity sequence, but a transaction may commit after one that took
 * a higher id. Each refresh therefore records its snapshot's xmax beside the highest id it saw, and
 * the cursor only moves up to that id once every transaction running at that snapshot has ended
 * (a later snapshot's xmin ≥ that xmax); until then refreshes re-read from the older cursor. The
 * build checks the same once, by counting the readings up to its highest id. Edits keep their id:
 * a change in the count of the session's `reading.edit` audit rows triggers a rebuild, and every
 * state is rebuilt after REBUILD_MS anyway (a reading changed outside the app). None of this
 * depends on NOTIFY: an instance that missed events catches up exactly on its next refresh.
 */
type StepView = { key: string; groupId: string | null; from: number; buckets: Buckets };
type KeptLine = { stamp: number; points: SeriesPoint[]; json: string };
type SeriesState = {
	sessionId: string;
	n: number;
	main: Buckets;
	/** The running steps' current, by step (id, start and group). */
	steps: Map<string, StepView>;
	builtAt: number | null;
	base: bigint;
	maxSeen: bigint;
	checkpoints: { maxId: bigint; xmax: bigint }[];
	verify: { xmax: bigint; maxId: bigint; count: number } | null;
	edits: number;
	usedAt: number;
	lock: Promise<unknown>;
	/**
	 * Downsampled lines by quantity and group, rounded, with their points already written as JSON:
	 * reused while their buckets have not changed, so a new reading re-serialises one group's lines.
	 */
	lines: Map<string, KeptLine>;
};

const MAX_STATES = 50;
/** About 250 bytes a bucket (three quantities): ~50 MB at most for all kept states together. */
const MAX_BUCKETS = 200_000;
const IDLE_MS = 10 * 60_000;
const REBUILD_MS = 15 * 60_000;
const states = new Map<string, SeriesState>();
const MAIN_QUANTITIES: Quantity[] = ['volts', 'temp_c', 'ambient_c'];

/**
 * The state of (session, n), most recently used last; idle ones go, and the least recently used
 * beyond MAX_STATES states or MAX_BUCKETS buckets in all.
 */
function stateFor(sessionId: string, n: number): SeriesState {
	const key = `${sessionId}:${n}`;
	const now = Date.now();
	for (const [k, state] of states) if (now - state.usedAt > IDLE_MS) states.delete(k);
	let state = states.get(key);
	if (state) states.delete(key);
	else {
		state = {
			sessionId,
			n,
			main: new Buckets(MAIN_QUANTITIES, 2 * n),
			steps: new Map(),
			builtAt: null,
			base: 0n,
			maxSeen: 0n,
			checkpoints: [],
			verify: null,
			edits: 0,
			usedAt: now,
			lock: Promise.resolve(),
			lines: new Map()
		};
	}
	state.usedAt = now;
	states.set(key, state);
	while (states.size > MAX_STATES) states.delete(states.keys().next().value!);
	let buckets = 0;
	const sizeOf = (kept: SeriesState) => kept.main.size + [...kept.steps.values()].reduce((n, v) => n + v.buckets.size, 0);
	for (const kept of states.values()) buckets += sizeOf(kept);
	for (const [k, kept] of states) {
		if (buckets <= MAX_BUCKETS || kept === state) break;
		buckets -= sizeOf(kept);
		states.delete(k);
	}
	return state;
}

/** Runs `fn` after the state's previous refresh has finished (one refresh at a time per state). */
function withState<T>(state: SeriesState, fn: () => Promise<T>): Promise<T> {
	const next = state.lock.then(fn);
	state.lock = next.catch(() => {});
	return next;
}

type Snapshot = { xmin: bigint; xmax: bigint; edits: number };

async function snapshotOf(run: Runner, sessionId: string): Promise<Snapshot> {
	const [row] = (await run.execute(sql`
		select pg_snapshot_xmin(s)::text as xmin, pg_snapshot_xmax(s)::text as xmax,
			(select count(*)::int from audit_events where session_id = ${sessionId} and kind = 'reading.edit') as edits
		from pg_current_snapshot() as s`)) as unknown as { xmin: string; xmax: string; edits: number }[];
	return { xmin: BigInt(row.xmin), xmax: BigInt(row.xmax), edits: row.edits };
}

const snapshotRead = { isolationLevel: 'repeatable read', accessMode: 'read only' } as const;

async function build(state: SeriesState) {
	await db.transaction(async (tx) => {
		const snap = await snapshotOf(tx, state.sessionId);
		const { count, maxId } = await bucketsFromSql(tx, state.main, sql`session_id = ${state.sessionId}`);
		state.base = state.maxSeen = maxId;
		state.checkpoints = [];
		state.edits = snap.edits;
		state.verify = snap.xmin < snap.xmax ? { xmax: snap.xmax, maxId, count } : null;
	}, snapshotRead);
	state.steps.clear();
	state.builtAt = Date.now();
}

type NewReading = {
	id: string;
	groupId: string | null;
	t: number;
	volts: number | null;
	temp_c: number | null;
	ambient_c: number | null;
	amps: number | null;
};

/** Folds in the readings not yet seen (or builds, when there is nothing to build on). */
async function refresh(state: SeriesState) {
	if (state.builtAt === null || Date.now() - state.builtAt > REBUILD_MS) return build(state);
	const read = await db.transaction(async (tx) => {
		const snap = await snapshotOf(tx, state.sessionId);
		if (snap.edits !== state.edits) return null;
		if (state.verify && snap.xmin >= state.verify.xmax) {
			const [{ count }] = (await tx.execute(sql`
				select (count(*) filter (where id <= ${String(state.verify.maxId)}::bigint))::int as count
				from readings where session_id = ${state.sessionId}`)) as unknown as { count: number }[];
			if (count !== state.verify.count) return null;
			state.verify = null;
		}
		const rows = (await tx.execute(sql`
			select id::text as id, group_id as "groupId", ${T} as t, volts, temp_c, ambient_c, amps
			from readings where session_id = ${state.sessionId} and id > ${String(state.base)}::bigint
			order by id`)) as unknown as NewReading[];
		return { snap, rows };
	}, snapshotRead);
	if (!read) return build(state);
	const { snap, rows } = read;
	const steps = [...state.steps.values()];
	for (const r of rows) {
		state.main.fold(r.groupId, r.t, [r.volts, r.temp_c, r.ambient_c]);
		for (const step of steps) if (r.groupId === step.groupId && r.t >= step.from) step.buckets.fold(r.groupId, r.t, [r.amps]);
		const id = BigInt(r.id);
		if (id > state.maxSeen) state.maxSeen = id;
	}
	state.checkpoints.push({ maxId: state.maxSeen, xmax: snap.xmax });
	// Every transaction running at these checkpoints had ended when this read began, and this read
	// started at the old cursor: everything up to their highest id is folded in.
	const done = state.checkpoints.filter((c) => c.xmax <= snap.xmin);
	if (done.length) {
		for (const c of done) if (c.maxId > state.base) state.base = c.maxId;
		state.checkpoints = state.checkpoints.filter((c) => c.xmax > snap.xmin);
	}
}

/** A running step's current in buckets, built once per step and then kept up by `refresh`. */
async function stepBuckets(state: SeriesState, view: Omit<StepView, 'buckets'>, where: SQL): Promise<Buckets> {
	let kept = state.steps.get(view.key);
	if (!kept) {
		const buckets = new Buckets(['amps'], 2 * state.n);
		await bucketsFromSql(db, buckets, where);
		kept = { ...view, buckets };
		state.steps.set(view.key, kept);
	}
	return kept.buckets;
}

/**
 * Chart data per (session, points), kept until the session's next event (every instance listens,
 * so each drops its own copy when a reading, step or status change commits) or for a minute at
 * most (an event lost while the LISTEN connection reconnects). Viewers asking at once share one
 * computation; a change costs the readings it brought, folded into the kept buckets.
 */
const CACHE_MS = 60_000;
const CACHE_ENTRIES = 100;
const cache = new Map<string, { at: number; value: Promise<SeriesAnswer> }>();
let cacheListening: Promise<boolean> | undefined;

function forgetSession(sessionId: string) {
	for (const key of [...cache.keys()]) if (key.startsWith(`${sessionId}:`)) cache.delete(key);
}

/** The session's chart data with at most `points` points per line; 404 when the member may not see it. */
export async function sessionSeries(member: Member, sessionId: string, points = DEFAULT_POINTS): Promise<SessionSeries> {
	return (await seriesAnswer(member, sessionId, points)).series;
}

/** The same as JSON text, kept with it, so that a viewer's refetch with nothing new serialises nothing. */
export async function sessionSeriesJson(member: Member, sessionId: string, points = DEFAULT_POINTS): Promise<string> {
	return (await seriesAnswer(member, sessionId, points)).json;
}

async function seriesAnswer(member: Member, sessionId: string, points: number): Promise<SeriesAnswer> {
	const visible = await sessionForMember(member, sessionId);
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

/** Forgets every kept state and cached answer (tests: the next request builds from scratch). */
export function forgetSeriesState() {
	states.clear();
	cache.clear();
}

/** Drops the cached answers of a session (as its next event does), keeping its buckets. */
export const forgetCachedSeries = forgetSession;

/** What is kept for (session, points), for tests and measurements: when it was built, its level. */
export function keptSeriesState(sessionId: string, points: number) {
	const state = states.get(`${sessionId}:${points}`);
	return state && { builtAt: state.builtAt, level: state.main.level, buckets: state.main.size, cursor: state.base };
}

function computeSeries(member: Member, visible: VisibleSession, n: number): Promise<SeriesAnswer> {
	const state = stateFor(visible.id, n);
	return withState(state, async () => {
		try {
			return await seriesFromState(member, visible, n, state);
		} catch (e) {
			state.builtAt = null;
			throw e;
		}
	});
}

async function seriesFromState(member: Member, visible: VisibleSession, n: number, state: SeriesState): Promise<SeriesAnswer> {
	const [[row], groups] = await Promise.all([
		db
			.select({ limits: chargeSessions.limits, series: packs.series, parallel: packs.parallel, cellSpecId: packs.cellSpecId })
			.from(chargeSessions)
			.innerJoin(packs, eq(packs.id, chargeSessions.packId))
			.where(eq(chargeSessions.id, visible.id)),
		db.select({ id: packGroups.id, index: packGroups.index }).from(packGroups).where(eq(packGroups.packId, visible.packId)),
		refresh(state)
	]);
	const main = state.main;
	// A new reading changes one group's lines: the others are reused as they were downsampled,
	// rounded and written out.
	const keptLine = (key: string, stamp: number, digits: number, points: () => SeriesPoint[]): KeptLine => {
		const kept = state.lines.get(key);
		if (kept && kept.stamp === stamp) return kept;
		const fresh = roundPoints(downsampleLine(points(), n), digits);
		const made = { stamp, points: fresh, json: JSON.stringify(fresh) };
		state.lines.set(key, made);
		return made;
	};
	const json = new Map<SeriesPoint[], string>();
	const line = (key: string, stamp: number, digits: number, points: () => SeriesPoint[]) => {
		const kept = keptLine(key, stamp, digits, points);
		json.set(kept.points, kept.json);
		return kept.points;
	};
	const indexOf = new Map(groups.map((g) => [g.id, g.index]));
	const lineKeys = [...main.groups.keys()].sort(
		(a, b) => (a === null ? Infinity : indexOf.get(a)!) - (b === null ? Infinity : indexOf.get(b)!)
	);
	const label = (groupId: string | null) => (groupId === null ? 'Whole pack (per cell)' : `G${indexOf.get(groupId)}`);
	const volts: SeriesLine[] = [];
	const temps: SeriesLine[] = [];
	for (const groupId of lineKeys) {
		// Whole-pack readings are pack volts: ÷ groups in series for a per-cell chart.
		const scale = groupId === null ? row.series : 1;
		const v = line(`volts:${groupId ?? ''}`, main.stamp('volts', groupId), VOLT_DIGITS, () => main.points(groupId, 'volts', scale));
		if (v.length) volts.push({ key: groupId ?? 'pack', label: label(groupId), points: v });
		const t = line(`temp_c:${groupId ?? ''}`, main.stamp('temp_c', groupId), DEGREE_DIGITS, () => main.points(groupId, 'temp_c'));
		if (t.length) temps.push({ key: groupId ?? 'pack', label: label(groupId), points: t });
	}
	const ambient = line('ambient', main.stamp('ambient_c'), DEGREE_DIGITS, () => main.pointsOfAll('ambient_c'));
	if (ambient.length) temps.push({ key: 'ambient', label: 'Ambient', points: ambient });
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
	const series: SessionSeries = {
		points: n,
		from: lo === Infinity ? null : new Date(lo).toISOString(),
		to: hi === -Infinity ? null : new Date(hi).toISOString(),
		volts,
		spread: line('spread', main.stamp('volts'), VOLT_DIGITS, () => main.spread()),
		temps,
		limits,
		steps: await runningSteps(member, visible, row, n, state)
	};
	// The answer as JSON, from the kept lines' JSON: the same text as JSON.stringify(series).
	const points = (p: SeriesPoint[]) => json.get(p) ?? JSON.stringify(p);
	const lines = (list: SeriesLine[]) =>
		`[${list.map((l) => `{"key":${JSON.stringify(l.key)},"label":${JSON.stringify(l.label)},"points":${points(l.points)}}`).join(',')}]`;
	const text =
		`{"points":${n},"from":${JSON.stringify(series.from)},"to":${JSON.stringify(series.to)},` +
		`"volts":${lines(volts)},"spread":${points(series.spread)},"temps":${lines(temps)},` +
		`"limits":${JSON.stringify(limits)},"steps":${JSON.stringify(series.steps)}}`;
	return { series, json: text };
}
