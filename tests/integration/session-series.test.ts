/**
 * Chart data of a session (series.ts) and its live events (live.ts), against the real database.
 * The downsampled lines are compared with the `downsample` package's own LTTB run here on the raw
 * readings read back with a plain query, and small cases are worked by hand.
 */
import { randomUUID } from 'node:crypto';
import { asc, eq, sql } from 'drizzle-orm';
import { LTTB } from 'downsample';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { chargeSessions, packGroups, sessionSteps } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { checkListening, listenerBackendPid, subscribe, subscriberCount } from '$lib/server/sessions/live';
import { notifySession, type SessionEvent } from '$lib/server/sessions/notify';
import { editReading } from '$lib/server/sessions/readings';
import { Buckets, forgetCachedSeries, forgetSeriesState, keptSeriesState, plannedCurrent, sessionSeries, sessionSeriesJson, type SessionSeries } from '$lib/server/sessions/series';
import { GET as eventsGet } from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/events/+server';
import { GET as seriesGet } from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/series/+server';
import { apiEvent, joinAs, packFixture } from './helpers';

const MINUTE = 60_000;

async function sessionOf(owner: Member, packId: string) {
	const [session] = await db
		.insert(chargeSessions)
		.values({
			id: newId(),
			workshopId: owner.workshop.id,
			packId,
			name: `Series ${randomUUID().slice(0, 6)}`,
			kind: 'one-at-a-time',
			plannedStart: new Date(Date.now() - 24 * 60 * MINUTE),
			handsOn: { daily: [{ from: '00:00', to: '23:59' }], once: [] },
			limits: { overVoltsWarning: 4.22, tempWarningC: 45 },
			status: 'running',
			startedAt: new Date(Date.now() - 24 * 60 * MINUTE),
			createdBy: owner.user.id,
			updatedBy: owner.user.id
		})
		.returning();
	return session;
}

type Row = { groupId: string | null; takenAt: Date; volts: number | null; tempC?: number | null; amps?: number | null };

/** Many readings in one statement over unnest()ed arrays (as text: postgres.js binds those). */
async function insertReadings(sessionId: string, packId: string, rows: Row[]) {
	const text = (values: (number | string | null | undefined)[]) => sql.param(values.map((v) => (v === null || v === undefined ? null : String(v))));
	await db.execute(sql`
		insert into readings (session_id, pack_id, group_id, taken_at, volts, temp_c, amps, source, client_id)
		select ${sessionId}, ${packId}, g, t::timestamptz, v::float8, c::float8, a::float8, 'device', ${randomUUID()} || '-' || ord
		from unnest(${text(rows.map((r) => r.groupId))}::text[],
			${text(rows.map((r) => r.takenAt.toISOString()))}::text[],
			${text(rows.map((r) => r.volts))}::text[],
			${text(rows.map((r) => r.tempC))}::text[],
			${text(rows.map((r) => r.amps))}::text[]) with ordinality as x(g, t, v, c, a, ord)`);
}

async function getSeries(who: Member, sessionId: string, points?: number) {
	const query = points === undefined ? '' : `?points=${points}`;
	const path = `/api/w/${who.workshop.slug}/sessions/${sessionId}/series${query}`;
	return seriesGet(apiEvent(who, path, { workshop: who.workshop.slug, sessionId }));
}

async function groupsOf(packId: string) {
	return db.select().from(packGroups).where(eq(packGroups.packId, packId)).orderBy(asc(packGroups.index));
}

describe('session chart data', () => {
	it('keeps each line within N points, its ends, and a spike and a dip, as the downsample package’s LTTB does', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 2 });
		const groups = await groupsOf(pack.id);
		const session = await sessionOf(owner, pack.id);
		const start = Date.now() - 1300 * MINUTE;
		const rows: Row[] = [];
		// 4 groups × 1,250 readings a minute apart (5,000 in all); group 2 has a spike up and a dip.
		for (let i = 0; i < 1250; i++) {
			groups.forEach((g, k) => {
				let volts = 3.6 + (0.5 * i) / 1250 + k * 0.004 + 0.002 * Math.sin(i / 7);
				if (k === 1 && i === 600) volts = 4.6;
				if (k === 1 && i === 900) volts = 3.0;
				rows.push({ groupId: g.id, takenAt: new Date(start + i * MINUTE + k * 1000), volts: Math.round(volts * 1000) / 1000, tempC: 25 + k + (i % 10) / 10 });
			});
		}
		await insertReadings(session.id, pack.id, rows);

		const raw = await db.execute(sql`
			select group_id as "groupId", extract(epoch from taken_at)::float8 * 1000 as t, volts
			from readings where session_id = ${session.id} order by taken_at`);
		const rawOf = (groupId: string) =>
			(raw as unknown as { groupId: string; t: number; volts: number }[]).filter((r) => r.groupId === groupId).map((r) => [r.t, r.volts] as [number, number]);

		for (const points of [600, 50]) {
			const response = await getSeries(owner, session.id, points);
			expect(response.status).toBe(200);
			const body = (await response.json()) as SessionSeries;
			expect(body.volts.map((l) => l.label)).toEqual(['G1', 'G2', 'G3', 'G4']);
			for (const [k, line] of body.volts.entries()) {
				const full = rawOf(groups[k].id);
				expect(full).toHaveLength(1250);
				expect(line.points.length).toBeLessThanOrEqual(points);
				expect(line.points[0]).toEqual(full[0]);
				expect(line.points.at(-1)).toEqual(full.at(-1));
				if (points === 600) {
					// At most two readings of a group per bucket: LTTB sees the raw line.
					const reference = LTTB(full, points) as [number, number][];
					expect(line.points).toEqual(reference);
				}
			}
			const g2 = body.volts[1].points.map((p) => p[1]);
			expect(Math.max(...g2)).toBe(4.6);
			expect(Math.min(...g2)).toBe(3.0);
			expect(body.temps.length).toBe(4);
			for (const line of body.temps) expect(line.points.length).toBeLessThanOrEqual(points);
			expect(body.spread.length).toBeLessThanOrEqual(points);
			// The spike makes the largest spread: 4.6 against the other groups' latest (≈ 3.84–3.85 V).
			expect(Math.max(...body.spread.map((p) => p[1]))).toBeGreaterThan(0.7);
			expect(body.limits).toEqual({ overVoltsWarning: 4.22, tempWarningC: 45 });
		}
	});

	it('gives the spread of the groups’ latest readings and whole-pack readings per cell (worked by hand), fresh after an event', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 2 });
		const [g1, g2] = await groupsOf(pack.id);
		const session = await sessionOf(owner, pack.id);
		const t0 = Date.now() - 60 * MINUTE;
		await insertReadings(session.id, pack.id, [
			{ groupId: g1.id, takenAt: new Date(t0), volts: 3.7 },
			{ groupId: g2.id, takenAt: new Date(t0 + MINUTE), volts: 3.75 },
			{ groupId: g1.id, takenAt: new Date(t0 + 2 * MINUTE), volts: 3.8 },
			{ groupId: null, takenAt: new Date(t0 + 3 * MINUTE), volts: 15.2 },
			{ groupId: g2.id, takenAt: new Date(t0 + 4 * MINUTE), volts: 3.9 }
		]);
		const body = (await (await getSeries(owner, session.id)).json()) as SessionSeries;
		// Spread = max − min of the latest per group, from the moment two groups have a reading:
		// t0+1: |3.75 − 3.70| = 0.05; t0+2: 3.80 − 3.75 = 0.05; t0+4: 3.90 − 3.80 = 0.10.
		expect(body.spread.map(([t, v]) => [t - t0, Math.round(v * 1000) / 1000])).toEqual([
			[MINUTE, 0.05],
			[2 * MINUTE, 0.05],
			[4 * MINUTE, 0.1]
		]);
		// 15.2 V over 4 groups in series = 3.8 V per cell.
		const packLine = body.volts.find((l) => l.key === 'pack');
		expect(packLine?.label).toBe('Whole pack (per cell)');
		expect(packLine?.points).toEqual([[t0 + 3 * MINUTE, 3.8]]);
		expect(body.steps).toEqual([]);
		// The answer is pieced together from each line's kept JSON: the same text JSON.stringify gives.
		expect(await sessionSeriesJson(owner, session.id)).toBe(JSON.stringify(await sessionSeries(owner, session.id)));

		// Kept for the next viewer until the session's next event, then computed again.
		await insertReadings(session.id, pack.id, [{ groupId: g1.id, takenAt: new Date(t0 + 5 * MINUTE), volts: 4.01 }]);
		const g1Last = async () => ((await (await getSeries(owner, session.id)).json()) as SessionSeries).volts[0].points.at(-1);
		expect(await g1Last()).toEqual([t0 + 2 * MINUTE, 3.8]);
		await db.transaction((tx) => notifySession(tx, { sessionId: session.id, workshopId: owner.workshop.id, kind: 'reading', count: 1 }));
		await expect.poll(g1Last).toEqual([t0 + 5 * MINUTE, 4.01]);
	});

	it('folds new readings, some taken earlier, into the kept buckets exactly as a fresh build does; an edit shows', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 2, capacityAh: 4 });
		const groups = await groupsOf(pack.id);
		const session = await sessionOf(owner, pack.id);
		const start = Date.now() - 20 * 60 * MINUTE;
		await db.insert(sessionSteps).values({
			id: newId(),
			sessionId: session.id,
			position: 1,
			groupId: groups[0].id,
			channelLabel: 'Channel 1',
			setVolts: 4.2,
			amps: 4,
			expectedStart: new Date(start),
			expectedEnd: new Date(start + 12 * 60 * MINUTE),
			ccHours: 10,
			cvHours: 2,
			actualStart: new Date(start),
			status: 'running'
		});
		const r3 = (n: number) => Math.round(n * 1000) / 1000;
		// Four groups read every 20 s; group 1 also logs its charge current (the running step's line).
		const reading = (i: number, k: number, volts?: number): Row => ({
			groupId: groups[k].id,
			takenAt: new Date(start + i * 20_000 + k * 1000),
			volts: volts ?? r3(3.7 + 0.2 * Math.sin(i / 40) + k * 0.01),
			tempC: r3(25 + (i % 13) / 10),
			amps: k === 0 ? r3(4 - i / 1000) : null
		});
		const round = (from: number, to: number, step = 1) => {
			const rows: Row[] = [];
			for (let i = from; i < to; i += step) for (let k = 0; k < 4; k++) rows.push(reading(i, k));
			return rows;
		};
		const N = 50; // 100 buckets: ~13 readings of a group per bucket, so the buckets really aggregate
		const fetchBody = async () => (await (await getSeries(owner, session.id, N)).json()) as SessionSeries;
		const comparable = (body: SessionSeries) => ({ ...body, steps: body.steps.map((s) => ({ ...s, reestimate: null })) });

		await insertReadings(session.id, pack.id, round(0, 1000));
		const first = await fetchBody();
		const kept = keptSeriesState(session.id, N)!;
		expect(kept.builtAt).not.toBeNull();

		// Later readings double the span (the buckets merge in pairs), readings taken before the
		// session's first one and between existing ones arrive late, with a spike and a dip.
		await insertReadings(session.id, pack.id, round(1000, 2000));
		await insertReadings(session.id, pack.id, [...round(-40, 0), ...round(500.5, 520.5), reading(1500, 2, 4.4), reading(700.5, 3, 3.1)]);
		await db.transaction((tx) => notifySession(tx, { sessionId: session.id, workshopId: owner.workshop.id, kind: 'reading', count: 1 }));
		await expect.poll(async () => (await fetchBody()).to).not.toBe(first.to);
		const incremental = await fetchBody();
		expect(keptSeriesState(session.id, N)).toMatchObject({ builtAt: kept.builtAt });
		expect(keptSeriesState(session.id, N)!.level).toBeGreaterThan(kept.level);

		const raw = (await db.execute(sql`
			select group_id as "groupId", extract(epoch from taken_at)::float8 * 1000 as t, volts
			from readings where session_id = ${session.id} order by taken_at`)) as unknown as { groupId: string; t: number; volts: number }[];
		for (const [k, line] of incremental.volts.entries()) {
			const mine = raw.filter((r) => r.groupId === groups[k].id);
			expect(line.points.length).toBeLessThanOrEqual(N);
			expect(line.points[0]).toEqual([mine[0].t, mine[0].volts]);
			expect(line.points.at(-1)).toEqual([mine.at(-1)!.t, mine.at(-1)!.volts]);
		}
		expect(Math.max(...incremental.volts[2].points.map((p) => p[1]))).toBe(4.4);
		expect(Math.min(...incremental.volts[3].points.map((p) => p[1]))).toBe(3.1);
		expect(incremental.steps[0]?.actualAmps[0][0]).toBe(start); // readings before the step's start stay out

		forgetSeriesState();
		expect(comparable(incremental)).toEqual(comparable(await fetchBody()));

		// An edited reading keeps its id: the edit (its audit row) makes the kept buckets rebuild.
		const [target] = (await db.execute(sql`
			select id from readings where session_id = ${session.id} and group_id = ${groups[1].id}
			order by taken_at offset 1200 limit 1`)) as unknown as { id: string }[];
		const before = keptSeriesState(session.id, N)!.builtAt;
		const edited = await editReading(owner, session.id, Number(target.id), { volts: 4.48 });
		expect(edited.ok).toBe(true);
		await expect.poll(async () => Math.max(...(await fetchBody()).volts[1].points.map((p) => p[1]))).toBe(4.48);
		expect(keptSeriesState(session.id, N)!.builtAt).not.toBe(before);
		const afterEdit = await fetchBody();
		forgetSeriesState();
		expect(comparable(afterEdit)).toEqual(comparable(await fetchBody()));
	});

	it.runIf(process.env.SERIES_TIMING)('prints what a refresh after one new reading costs at 1,000 and 100,000 readings', async () => {
		const { owner, pack } = await packFixture({ series: 13, parallel: 4 });
		const groups = await groupsOf(pack.id);
		const figures: string[] = [];
		for (const size of [1_000, 100_000]) {
			const session = await sessionOf(owner, pack.id);
			const start = Date.now() - 40 * 60 * MINUTE;
			const step = (40 * 60 * MINUTE) / size;
			for (let from = 0; from < size; from += 20_000) {
				const rows: Row[] = [];
				for (let i = from; i < Math.min(size, from + 20_000); i++)
					rows.push({ groupId: groups[i % groups.length].id, takenAt: new Date(start + i * step), volts: 3.7 + 0.3 * Math.sin(i / 500), tempC: 26 });
				await insertReadings(session.id, pack.id, rows);
			}
			await db.execute(sql`analyze readings`);
			const timed = async () => {
				const t0 = performance.now();
				expect((await getSeries(owner, session.id)).status).toBe(200);
				return performance.now() - t0;
			};
			forgetSeriesState();
			const build = await timed();
			const refreshes: number[] = [];
			for (let r = 0; r < 7; r++) {
				await insertReadings(session.id, pack.id, [{ groupId: groups[r % groups.length].id, takenAt: new Date(Date.now() - r * 7 * MINUTE), volts: 3.9, tempC: 27 }]);
				forgetCachedSeries(session.id);
				refreshes.push(await timed());
			}
			refreshes.sort((a, b) => a - b);
			figures.push(`${size} readings: full build ${build.toFixed(0)} ms, refresh after one new reading median ${refreshes[3].toFixed(1)} ms (min ${refreshes[0].toFixed(1)}, max ${refreshes[6].toFixed(1)})`);
			if (size === 100_000) {
				const plan = (await db.execute(sql`explain (analyze, costs off, timing off, summary off)
					select id from readings where session_id = ${session.id} and id > ${String(keptSeriesState(session.id, 600)!.cursor)}::bigint order by id`)) as unknown as Record<string, string>[];
				figures.push(plan.map((row) => Object.values(row)[0]).join('\n'));
			}
		}
		console.log(figures.join('\n'));
	}, 600_000);

	it('works the spread out again from the changed bucket on, as a scan of all the readings at once would', () => {
		// The spread is kept between readings and resumed from a checkpoint before the first bucket a
		// new reading changed. Readings arrive one at a time, in or out of time order, from groups that
		// appear late, across coarsenings; after each, the kept spread must equal a fresh scan.
		const reading = fc.record({
			group: fc.constantFrom('g1', 'g2', 'g3', 'g4'),
			t: fc.integer({ min: 0, max: 3_000_000 }),
			volts: fc.integer({ min: 3000, max: 4300 }).map((mv) => mv / 1000)
		});
		let runs = 0;
		fc.assert(
			fc.property(fc.array(reading, { minLength: 1, maxLength: 160 }), fc.constantFrom(8, 100, 400), (readings, cap) => {
				runs++;
				const live = new Buckets(['volts', 'temp_c'], cap);
				for (let i = 0; i < readings.length; i++) {
					const r = readings[i];
					live.fold(r.group, r.t, [r.volts, null]);
					if (i % 3 !== 0 && i !== readings.length - 1) continue;
					const fresh = new Buckets(['volts', 'temp_c'], cap);
					for (const x of readings.slice(0, i + 1)) fresh.fold(x.group, x.t, [x.volts, null]);
					expect(live.spread()).toEqual(fresh.spread());
				}
			}),
			{ numRuns: 200, seed: 20261203 }
		);
		expect(runs).toBe(200);
		// And a hand-made case: a late reading of group 1 in an early bucket changes every later point
		// (group 1's latest carries forward), while the points before it stay.
		const b = new Buckets(['volts'], 1000);
		b.fold('g1', 0, [3.9]);
		b.fold('g2', 0, [3.8]);
		for (let k = 1; k <= 200; k++) b.fold('g2', k * 1000, [3.8]);
		expect(b.spread().every(([, v]) => Math.abs(v - 0.1) < 1e-9)).toBe(true);
		b.fold('g1', 100_000, [4.0]);
		const after = b.spread();
		expect(after.filter(([t]) => t < 100_000).every(([, v]) => Math.abs(v - 0.1) < 1e-9)).toBe(true);
		expect(after.filter(([t]) => t >= 100_000).every(([, v]) => Math.abs(v - 0.2) < 1e-9)).toBe(true);
	});

	it('keeps a spike logged at the same moment as another reading of its group, wherever it falls in its bucket', () => {
		// Buckets are 1 s · 2^level, aligned to the epoch; 8 s of readings in at most 4 buckets: 2 s each.
		for (const [tie, other] of [
			[4000, 4500], // the two readings are the bucket's first
			[5000, 4500], // its last
			[4500, 4000] // between its first and its last
		]) {
			const b = new Buckets(['volts'], 4);
			b.fold('g', 0, [3.9]);
			b.fold('g', 7000, [3.9]);
			b.fold('g', other, [3.8]);
			b.fold('g', tie, [3.9]);
			b.fold('g', tie, [4.4]);
			const points = b.points('g', 'volts');
			expect(points).toContainEqual([tie, 4.4]);
			expect(points).toContainEqual([other, 3.8]);
			// Each reading once, in time order.
			expect(points.length).toBe(new Set(points.map((p) => p.join())).size);
			expect(points.map((p) => p[0])).toEqual([...points.map((p) => p[0])].sort((x, y) => x - y));
		}
	});

	it('draws every running step’s planned current next to the logged one (two channels side by side)', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 2, capacityAh: 4 });
		const [g1, g2, g3] = await groupsOf(pack.id);
		const session = await sessionOf(owner, pack.id);
		const start = Date.now() - 90 * MINUTE;
		const step = (position: number, groupId: string, channelLabel: string, status: 'running' | 'waiting', startedAt: number | null) => ({
			id: newId(),
			sessionId: session.id,
			position,
			groupId,
			channelLabel,
			setVolts: 4.2,
			amps: 4,
			expectedStart: new Date(start),
			expectedEnd: new Date(start + 3 * 60 * MINUTE),
			ccHours: 1.5,
			cvHours: 1.5,
			actualStart: startedAt === null ? null : new Date(startedAt),
			status
		});
		await db.insert(sessionSteps).values([
			step(1, g1.id, 'Channel 1', 'running', start),
			step(2, g2.id, 'Channel 2', 'running', start + 30 * MINUTE),
			step(3, g3.id, 'Channel 1', 'waiting', null)
		]);
		await insertReadings(session.id, pack.id, [
			{ groupId: g1.id, takenAt: new Date(start + 30 * MINUTE), volts: 3.9, amps: 4 },
			{ groupId: g1.id, takenAt: new Date(start + 60 * MINUTE), volts: 4.05, amps: 4 },
			{ groupId: g1.id, takenAt: new Date(start + 89 * MINUTE), volts: 4.2, amps: 3.1 },
			// Group 2 before its step started (at rest) and on its charger.
			{ groupId: g2.id, takenAt: new Date(start + 20 * MINUTE), volts: 3.6, amps: 0 },
			{ groupId: g2.id, takenAt: new Date(start + 60 * MINUTE), volts: 3.95, amps: 3.9 }
		]);
		const body = (await (await getSeries(owner, session.id)).json()) as SessionSeries;
		expect(body.steps.map((s) => [s.position, s.channelLabel])).toEqual([
			[1, 'Channel 1'],
			[2, 'Channel 2']
		]);
		expect(body.steps[1].actualAmps).toEqual([[start + 60 * MINUTE, 3.9]]);
		// A new reading of group 2 is folded into its step's kept line.
		await insertReadings(session.id, pack.id, [{ groupId: g2.id, takenAt: new Date(start + 80 * MINUTE), volts: 4.1, amps: 3.8 }]);
		await db.transaction((tx) => notifySession(tx, { sessionId: session.id, workshopId: owner.workshop.id, kind: 'reading', count: 1 }));
		await expect
			.poll(async () => ((await (await getSeries(owner, session.id)).json()) as SessionSeries).steps[1].actualAmps.map((p) => p[1]))
			.toEqual([3.9, 3.8]);
		expect(body.steps[0]?.actualAmps.map((p) => p[1])).toEqual([4, 4, 3.1]);
		// Built-in NMC ends at 0.05C: 0.05 × 4 Ah × 2 in parallel = 0.4 A, reached at the end of CV.
		const predicted = body.steps[0].predictedAmps;
		expect(predicted[0]).toEqual([start, 4]);
		expect(predicted.at(-1)![0]).toBe(start + 3 * 60 * MINUTE);
		expect(predicted.at(-1)![1]).toBeCloseTo(0.4, 3);
		expect(body.steps[0]?.predictedBasis).toContain('0.4 A');
		expect(body.steps[0]?.reestimate?.remainingHours).toBeGreaterThan(0);
	});

	it('says a step set at or below the cut-off current ends at the set voltage, with no CV taper', async () => {
		// Built-in NMC ends at 0.05C: 0.05 × 4 Ah × 2 in parallel = 0.4 A; the step charges at 0.3 A.
		const { owner, pack } = await packFixture({ series: 4, parallel: 2, capacityAh: 4 });
		const [g1] = await groupsOf(pack.id);
		const session = await sessionOf(owner, pack.id);
		const start = Date.now() - 30 * MINUTE;
		await db.insert(sessionSteps).values({
			id: newId(),
			sessionId: session.id,
			position: 1,
			groupId: g1.id,
			channelLabel: 'Channel 1',
			setVolts: 4.2,
			amps: 0.3,
			expectedStart: new Date(start),
			expectedEnd: new Date(start + 20 * 60 * MINUTE),
			ccHours: 20,
			cvHours: 0,
			actualStart: new Date(start),
			status: 'running'
		});
		await insertReadings(session.id, pack.id, [{ groupId: g1.id, takenAt: new Date(start + 10 * MINUTE), volts: 3.9, amps: 0.3 }]);
		const body = (await (await getSeries(owner, session.id)).json()) as SessionSeries;
		expect(body.steps[0].predictedBasis).toContain('0.3 A is already at or below the 0.4 A cut-off, so there is no CV taper');
		expect(body.steps[0].predictedBasis).not.toContain('tapering');
	});

	it('plannedCurrent: the exponential taper is at I/√(I/Iterm) halfway through CV (worked by hand)', () => {
		// I = 2 A, Iterm = 0.2 A: halfway, 2 × 10^(−1/2) = 0.6325 A; at the end 0.2 A.
		const points = plannedCurrent(0, { amps: 2, preHours: 0, ccHours: 1, cvHours: 2 }, 0.2, 2);
		expect(points).toEqual([
			[0, 2],
			[3_600_000, 2],
			[7_200_000, 0.6325],
			[10_800_000, 0.2]
		]);
	});

	it('answers empty lines before the first reading, 404 to a viewer who does not own the pack and 400 to a bad points value', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 1 });
		const session = await sessionOf(owner, pack.id);
		const viewer = await joinAs(owner, 'viewer');
		await expect(getSeries(viewer, session.id)).rejects.toMatchObject({ status: 404 });
		const empty = (await (await getSeries(owner, session.id)).json()) as SessionSeries;
		expect(empty).toMatchObject({ from: null, to: null, volts: [], spread: [], temps: [], steps: [] });
		const events = apiEvent(viewer, `/api/w/${owner.workshop.slug}/sessions/${session.id}/events`, { workshop: owner.workshop.slug, sessionId: session.id });
		await expect(eventsGet(events as never)).rejects.toMatchObject({ status: 404 });
		for (const bad of ['5000', '3', 'abc', '1.5']) {
			const path = `/api/w/${owner.workshop.slug}/sessions/${session.id}/series?points=${bad}`;
			const response = await seriesGet(apiEvent(owner, path, { workshop: owner.workshop.slug, sessionId: session.id }));
			expect(response.status).toBe(400);
		}
	});
});

describe('session events', () => {
	it('fans a committed NOTIFY out to the session’s subscribers only, never a rolled-back one', async () => {
		const a = newId();
		const b = newId();
		const heard: SessionEvent[] = [];
		const stop = await subscribe(a, (e) => heard.push(e));
		const other: SessionEvent[] = [];
		const stopOther = await subscribe(b, (e) => other.push(e));
		await db
			.transaction(async (tx) => {
				await notifySession(tx, { sessionId: a, workshopId: 'w', kind: 'reading', count: 9 });
				throw new Error('roll back');
			})
			.catch(() => {});
		await db.transaction((tx) => notifySession(tx, { sessionId: a, workshopId: 'w', kind: 'reading', count: 2, newest: '2026-01-01T00:00:00.000Z' }));
		await expect.poll(() => heard.length).toBe(1);
		expect(heard[0]).toMatchObject({ sessionId: a, kind: 'reading', count: 2 });
		expect(other).toEqual([]);
		stop();
		stopOther();
		expect(subscriberCount(a)).toBe(0);
	});

	it('streams events as text/event-stream and unsubscribes when the client goes away', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 1 });
		const session = await sessionOf(owner, pack.id);
		const abort = new AbortController();
		const event = apiEvent<Parameters<typeof eventsGet>[0]>(owner, `/api/w/${owner.workshop.slug}/sessions/${session.id}/events`, {
			workshop: owner.workshop.slug,
			sessionId: session.id
		});
		Object.defineProperty(event, 'request', { value: new Request(event.url, { signal: abort.signal }) });
		const response = await eventsGet(event);
		expect(response.headers.get('content-type')).toContain('text/event-stream');
		expect(response.headers.get('cache-control')).toBe('no-store');
		expect(response.headers.get('x-accel-buffering')).toBe('no');
		const reader = response.body!.pipeThrough(new TextDecoderStream()).getReader();
		let text = '';
		while (!text.includes(': listening')) text += (await reader.read()).value;
		await db.transaction((tx) => notifySession(tx, { sessionId: session.id, workshopId: owner.workshop.id, kind: 'step' }));
		while (!text.includes('event: step')) text += (await reader.read()).value;
		const frame = text.slice(text.indexOf('event: step')).split('\n\n')[0];
		expect(JSON.parse(frame.split('\ndata: ')[1])).toMatchObject({ sessionId: session.id, kind: 'step' });
		expect(subscriberCount(session.id)).toBe(1);
		abort.abort();
		await expect.poll(() => subscriberCount(session.id)).toBe(0);
	});

	it('keeps hearing events after the listening connection is cut', async () => {
		const id = newId();
		const heard: SessionEvent[] = [];
		const stop = await subscribe(id, (e) => heard.push(e));
		const pid = listenerBackendPid();
		expect(pid).toBeGreaterThan(0);
		await db.execute(sql`select pg_terminate_backend(${pid}::int)`);
		await expect.poll(() => listenerBackendPid() !== pid && listenerBackendPid() !== undefined, { timeout: 10_000 }).toBe(true);
		expect(await checkListening()).toBe(true);
		await db.transaction((tx) => notifySession(tx, { sessionId: id, workshopId: 'w', kind: 'watch' }));
		await expect.poll(() => heard.map((e) => e.kind)).toEqual(['watch']);
		stop();
	});
});
