/**
 * The drift between sessions (alerts/session-drift.ts) against the real database: sessions of one
 * 4S1P NMC pack written straight into the tables with hand-written readings, the last one ended
 * through the real transitions (finishStep, stopSession) and the close-finished-sessions job.
 *
 * Hand-worked numbers (volts per cell; a group's gap is its volts minus the mean of the others):
 *   earlier full charge A, end of charge 4.195 4.195 4.180 4.195
 *     group 3: 4.180 − (4.195 + 4.195 + 4.195) / 3 = −0.015 V (15 mV below)
 *     at rest 4.170 4.170 4.160 4.170 → group 3: 4.160 − 4.170 = −0.010 V
 *   storage charge S (between A and B), end 3.850 3.850 3.811 3.850 → group 3: −0.039 V
 *     (were it compared, B's change would be only −0.001 V: no alert)
 *   this full charge B, end of charge 4.190 4.190 4.150 4.190
 *     group 3: 4.150 − 4.190 = −0.040 V (40 mV below); change −0.040 − (−0.015) = −0.025 V
 *     group 1: 4.190 − (4.190 + 4.150 + 4.190) / 3 = +0.0133 V; at A +0.005 V; change +0.0083 V
 *     at rest (groups 1–3 only: group 4's step has just ended) 4.165 4.165 4.140
 *     → group 3: 4.140 − 4.165 = −0.025 V; change −0.025 − (−0.010) = −0.015 V
 * The sessions' drift limit is 20 mV (a planner may tighten the default 30 mV): only group 3's
 * end-of-charge change (25 mV, and farther from the others than before) exceeds it.
 */
import { randomUUID } from 'node:crypto';
import { asc, eq, inArray } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { alertDeliveries, alerts, chargeSessions, packGroups, readings, sessionSteps, type ChargeSession } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { closeFinishedSessions } from '$lib/server/jobs/close-finished-sessions';
import { finishStep, stopSession } from '$lib/server/sessions/transitions';
import { targetKey } from '$lib/server/alerts/session-drift';
import { joinAs, packFixture } from './helpers';

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
const DAY = 24 * HOUR;

type Target = { target: ChargeSession['target']; targetVolts?: number };

async function driftPack() {
	const { owner, pack } = await packFixture({ series: 4, parallel: 1 });
	const technician = await joinAs(owner, 'technician');
	const groups = await db.select().from(packGroups).where(eq(packGroups.packId, pack.id)).orderBy(asc(packGroups.index));
	return { owner, technician, pack, groups };
}

type Pack = Awaited<ReturnType<typeof driftPack>>;

/**
 * A session of the pack: one 90-minute charge step per group, two hours apart from `start`. Each
 * group has a reading before its step (not an end value), `end` five minutes before its step ends,
 * one ten minutes after (neither end nor rest), and `rest` two hours after its step ended. With
 * `lastRunning`, the last group's step is still running (its end reading five minutes ago) and
 * the session runs; otherwise every step is done and the session is done at the last step's end.
 */
async function addSession(
	p: Pack,
	target: Target,
	start: number,
	end: number[],
	rest: (number | null)[],
	opts: { lastRunning?: boolean; now?: number } = {}
) {
	const now = opts.now ?? Date.now();
	const stepEnd = (i: number) => (opts.lastRunning && i === p.groups.length - 1 ? now : start + i * 2 * HOUR + 90 * MINUTE);
	const lastEnd = stepEnd(p.groups.length - 1);
	const [session] = await db
		.insert(chargeSessions)
		.values({
			id: newId(),
			workshopId: p.owner.workshop.id,
			packId: p.pack.id,
			name: `Drift ${randomUUID().slice(0, 6)}`,
			kind: 'one-at-a-time',
			target: target.target,
			targetVolts: target.targetVolts ?? null,
			plannedStart: new Date(start),
			handsOn: { daily: [{ from: '00:00', to: '23:59' }], once: [] },
			limits: { driftWarningVolts: 0.02 },
			status: opts.lastRunning ? 'running' : 'done',
			startedAt: new Date(start),
			endedAt: opts.lastRunning ? null : new Date(lastEnd),
			watchUserId: p.technician.user.id,
			createdBy: p.owner.user.id,
			updatedBy: p.owner.user.id
		})
		.returning();
	const steps = p.groups.map((g, i) => {
		const running = opts.lastRunning && i === p.groups.length - 1;
		const from = running ? now - HOUR : start + i * 2 * HOUR;
		return {
			id: newId(),
			sessionId: session.id,
			position: i + 1,
			groupId: g.id,
			channelLabel: 'Channel 1',
			setVolts: 4.2,
			amps: 2,
			expectedStart: new Date(from),
			expectedEnd: new Date(from + 90 * MINUTE),
			actualStart: new Date(from),
			actualEnd: running ? null : new Date(stepEnd(i)),
			status: running ? ('running' as const) : ('done' as const)
		};
	});
	await db.insert(sessionSteps).values(steps);
	const rows: (typeof readings.$inferInsert)[] = [];
	const add = (groupId: string | null, at: number, volts: number) =>
		rows.push({ sessionId: session.id, packId: p.pack.id, groupId, takenAt: new Date(at), volts, source: 'hand', clientId: randomUUID() });
	p.groups.forEach((g, i) => {
		const from = steps[i].actualStart.getTime();
		const to = stepEnd(i);
		add(g.id, from - 10 * MINUTE, 3.7);
		add(g.id, to - 5 * MINUTE, end[i]);
		if (to + 10 * MINUTE <= now) add(g.id, to + 10 * MINUTE, end[i] - 0.02);
		if (rest[i] !== null && to + 2 * HOUR <= now) add(g.id, to + 2 * HOUR, rest[i]!);
	});
	// A whole-pack reading is not a group's: left out of the comparison.
	add(null, start + 30 * MINUTE, 15.2);
	await db.insert(readings).values(rows);
	return { session, steps };
}

const alertsOf = (sessionId: string) => db.select().from(alerts).where(eq(alerts.sessionId, sessionId));

/** The earlier full charge A and the storage charge S (header), done 30 and 10 days ago. */
async function history(p: Pack) {
	const now = Date.now();
	const a = await addSession(p, { target: 'full' }, now - 30 * DAY, [4.195, 4.195, 4.18, 4.195], [4.17, 4.17, 4.16, 4.17]);
	const s = await addSession(p, { target: 'storage' }, now - 10 * DAY, [3.85, 3.85, 3.811, 3.85], [null, null, null, null]);
	return { a, s };
}

/** This full charge B, its last step running; ends when that step is finished. */
const current = (p: Pack, target: Target = { target: 'full' }) =>
	addSession(p, target, Date.now() - 10 * HOUR, [4.19, 4.19, 4.15, 4.19], [4.165, 4.165, 4.14, null], { lastRunning: true });

describe('drift between sessions', () => {
	it('a full charge where group 3 ended 40 mV below the others, 15 mV at the last full charge: one warning with the numbers, told to the watchers', async () => {
		const p = await driftPack();
		const { a } = await history(p);
		const b = await current(p);
		const finished = await finishStep(p.technician, b.session.id, b.steps[3].id);
		expect(finished).toMatchObject({ ok: true, session: { status: 'done' } });

		const raised = await alertsOf(b.session.id);
		expect(raised).toHaveLength(1);
		const alert = raised[0];
		expect(alert).toMatchObject({ kind: 'session-drift', severity: 'warning', groupId: p.groups[2].id, packId: p.pack.id, clearedAt: null, acknowledgedAt: null });
		expect(alert.title).toBe('Group 3: drifting since the last charge');
		expect(alert.message).toBe('Group 3 ended 40 mV below the others, 25 mV more than at the last full charge.');
		expect(alert.value!).toBeCloseTo(-0.025, 6);
		expect(alert.threshold).toBe(0.02);
		const details = alert.details as Record<string, number | string | null>;
		expect(details.moment).toBe('end');
		expect(details.previousSessionId).toBe(a.session.id);
		expect(details.target).toBe('full');
		expect(details.gapVolts as number).toBeCloseTo(-0.04, 6);
		expect(details.previousGapVolts as number).toBeCloseTo(-0.015, 6);
		expect(details.restGapVolts as number).toBeCloseTo(-0.025, 6);
		expect(details.previousRestGapVolts as number).toBeCloseTo(-0.01, 6);
		// The reading it points at is group 3's end-of-charge reading of this session.
		const [pointed] = await db.select().from(readings).where(eq(readings.id, alert.readingId!));
		expect(pointed).toMatchObject({ sessionId: b.session.id, groupId: p.groups[2].id, volts: 4.15 });

		// Outbox rows for the watchers: the owner (who planned it) and the technician on watch, each
		// by e-mail (push turned on, but no device: recorded as gone).
		const rows = await db.select().from(alertDeliveries).where(eq(alertDeliveries.alertId, alert.id));
		const byUser = (id: string) => rows.filter((r) => r.userId === id).map((r) => `${r.channel}:${r.status}:${r.reason}`).sort();
		expect(byUser(p.owner.user.id)).toEqual(['email:pending:watcher', 'push:gone:watcher']);
		expect(byUser(p.technician.user.id)).toEqual(['email:pending:on-watch', 'push:gone:on-watch']);
		expect(new Set(rows.map((r) => r.userId))).toEqual(new Set([p.owner.user.id, p.technician.user.id]));
	});

	it('a charge to another target is not compared with the full charges', async () => {
		const p = await driftPack();
		await history(p);
		// A storage charge: compared with S only, where group 3 was 39 mV below already.
		const storage = await current(p, { target: 'storage' });
		await finishStep(p.technician, storage.session.id, storage.steps[3].id);
		expect(await alertsOf(storage.session.id)).toEqual([]);

		// A charge to a chosen 3.900 V: no earlier one with that target, so nothing to compare.
		const q = await driftPack();
		await addSession(q, { target: 'volts', targetVolts: 3.8 }, Date.now() - 30 * DAY, [3.8, 3.8, 3.8, 3.8], [null, null, null, null]);
		const chosen = await current(q, { target: 'volts', targetVolts: 3.9 });
		await finishStep(q.technician, chosen.session.id, chosen.steps[3].id);
		expect(await alertsOf(chosen.session.id)).toEqual([]);
		expect(targetKey({ target: 'volts', targetVolts: 3.9 })).toBe('volts:3.900');
		expect(targetKey({ target: 'full', targetVolts: null })).toBe('full');
	});

	it('a stopped session raises nothing, and is not the last full charge the next one is compared with', async () => {
		const p = await driftPack();
		await history(p);
		const stopped = await addSession(p, { target: 'full' }, Date.now() - 5 * DAY, [4.19, 4.19, 4.0, 4.19], [null, null, null, null], {
			lastRunning: true,
			now: Date.now() - 5 * DAY + 8 * HOUR
		});
		expect(await stopSession(p.technician, stopped.session.id, 'Group 3 would not charge; checking the leads')).toMatchObject({ ok: true });
		expect(await alertsOf(stopped.session.id)).toEqual([]);

		// B against A (not the stopped one, where group 3 sat 190 mV below): the same warning as above.
		const b = await current(p);
		await finishStep(p.technician, b.session.id, b.steps[3].id);
		const raised = await alertsOf(b.session.id);
		expect(raised.map((r) => r.message)).toEqual(['Group 3 ended 40 mV below the others, 25 mV more than at the last full charge.']);
	});

	it('the job that closes finished sessions compares them too, once', async () => {
		const p = await driftPack();
		await history(p);
		const b = await current(p);
		// Its last step ended by hand outside the transitions (as a device or a skipped step can leave it).
		const endedAt = new Date();
		await db.update(sessionSteps).set({ status: 'done', actualEnd: endedAt }).where(eq(sessionSteps.id, b.steps[3].id));
		const { closed } = await closeFinishedSessions(new Date(endedAt.getTime() + MINUTE));
		expect(closed).toContain(b.session.id);
		const raised = await alertsOf(b.session.id);
		expect(raised.map((r) => [r.kind, r.groupId])).toEqual([['session-drift', p.groups[2].id]]);
		const again = await closeFinishedSessions(new Date(endedAt.getTime() + 2 * MINUTE));
		expect(again.closed).not.toContain(b.session.id);
		expect(await db.select().from(alerts).where(inArray(alerts.sessionId, [b.session.id]))).toHaveLength(1);
	});
});
