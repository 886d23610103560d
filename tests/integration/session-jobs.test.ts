// The session jobs against the real test database: closing sessions whose steps all ended, and
// the reading clock. Other test files share the database, so every check names its own sessions.
import { randomUUID } from 'node:crypto';
import { and, asc, eq, inArray } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { defaultLimits } from '$lib/engine';
import { db } from '$lib/server/db';
import { auditEvents, chargeSessions, packGroups, readings, sessionSteps } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { closeFinishedSessionsJob } from '$lib/server/jobs/close-finished-sessions';
import { readingClockJob } from '$lib/server/jobs/reading-clock';
import { packFixture } from './helpers';

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;

type StepState = 'waiting' | 'running' | 'done' | 'skipped';

/** A pack with a session in `status`, one step per entry of `steps` (group 1, 2, …), started `startedAgo` ms before `now`. */
async function sessionFixture(opts: { status: 'running' | 'paused'; steps: StepState[]; now: Date; startedAgo: number; interval?: number }) {
	const { owner, pack } = await packFixture({ series: 3, parallel: 1 });
	const groups = await db.select().from(packGroups).where(eq(packGroups.packId, pack.id)).orderBy(asc(packGroups.index));
	const limits = defaultLimits('nmc', 4.2);
	if (!limits.ok) throw new Error('limits');
	const { ok: _ok, ...stored } = limits;
	const startedAt = new Date(opts.now.getTime() - opts.startedAgo);
	const sessionId = newId();
	await db.insert(chargeSessions).values({
		id: sessionId,
		workshopId: owner.workshop.id,
		packId: pack.id,
		kind: 'one-at-a-time',
		setVolts: 4.2,
		plannedStart: startedAt,
		handsOn: { daily: [], once: [] },
		readingIntervalMinutes: opts.interval ?? 60,
		limits: stored,
		status: opts.status,
		startedAt
	});
	// Steps of one hour each from the start; ended steps ended on the hour.
	const stepRows = opts.steps.map((status, i) => {
		const s = new Date(startedAt.getTime() + i * HOUR);
		const e = new Date(s.getTime() + HOUR);
		const ended = status === 'done' || status === 'skipped';
		return {
			id: newId(),
			sessionId,
			position: i + 1,
			groupId: groups[i].id,
			channelLabel: 'Bench supply',
			setVolts: 4.2,
			amps: 4,
			expectedStart: s,
			expectedEnd: e,
			status,
			actualStart: status === 'waiting' ? null : s,
			actualEnd: ended ? e : null
		};
	});
	if (stepRows.length) await db.insert(sessionSteps).values(stepRows);
	return { owner, pack, groups, sessionId, startedAt, steps: stepRows };
}

async function sessionRow(id: string) {
	const [row] = await db.select().from(chargeSessions).where(eq(chargeSessions.id, id));
	return row;
}

async function addReading(s: { sessionId: string; pack: { id: string }; groups: { id: string }[] }, takenAt: Date) {
	await db.insert(readings).values({
		sessionId: s.sessionId,
		packId: s.pack.id,
		groupId: s.groups[0].id,
		takenAt,
		volts: 3.9,
		source: 'hand',
		clientId: randomUUID()
	});
}

describe('the close-finished-sessions job', () => {
	it('closes a running session whose steps are all done or skipped, once, as Cellsitter', async () => {
		const now = new Date();
		const finished = await sessionFixture({ status: 'running', steps: ['done', 'skipped', 'done'], now, startedAgo: 4 * HOUR });
		const open = await sessionFixture({ status: 'running', steps: ['done', 'running', 'waiting'], now, startedAgo: 2 * HOUR });
		const paused = await sessionFixture({ status: 'paused', steps: ['done', 'done', 'done'], now, startedAgo: 4 * HOUR });

		const first = (await closeFinishedSessionsJob.handle({ now: now.toISOString() })) as { closed: string[] };
		expect(first.closed).toContain(finished.sessionId);
		expect(first.closed).not.toContain(open.sessionId);
		expect(first.closed).not.toContain(paused.sessionId);

		const done = await sessionRow(finished.sessionId);
		expect(done.status).toBe('done');
		// The session ended when its last step did: the third step, started 2 h in, ended 3 h in.
		expect(done.endedAt?.getTime()).toBe(finished.startedAt.getTime() + 3 * HOUR);
		expect((await sessionRow(open.sessionId)).status).toBe('running');
		expect((await sessionRow(paused.sessionId)).status).toBe('paused');

		// A second run finds nothing more to do and writes no second record.
		const second = (await closeFinishedSessionsJob.handle({ now: new Date(now.getTime() + MINUTE).toISOString() })) as { closed: string[] };
		expect(second.closed).not.toContain(finished.sessionId);
		const events = await db
			.select()
			.from(auditEvents)
			.where(and(eq(auditEvents.sessionId, finished.sessionId), eq(auditEvents.kind, 'session.done')));
		expect(events).toHaveLength(1);
		expect(events[0]).toMatchObject({ actorId: null, actorLabel: 'Cellsitter', subjectType: 'session', subjectId: finished.sessionId });
		expect(events[0].before).toMatchObject({ status: 'running' });
		expect(events[0].after).toMatchObject({ status: 'done' });
		expect(await db.select().from(auditEvents).where(inArray(auditEvents.sessionId, [open.sessionId, paused.sessionId]))).toHaveLength(0);
	});

	it('leaves a running session without steps alone', async () => {
		const now = new Date();
		const empty = await sessionFixture({ status: 'running', steps: [], now, startedAgo: HOUR });
		const result = (await closeFinishedSessionsJob.handle({ now: now.toISOString() })) as { closed: string[] };
		expect(result.closed).not.toContain(empty.sessionId);
		expect((await sessionRow(empty.sessionId)).status).toBe('running');
	});

	it('closes a session only once when two runs meet', async () => {
		const now = new Date();
		const s = await sessionFixture({ status: 'running', steps: ['done'], now, startedAgo: 2 * HOUR });
		const runs = (await Promise.all([
			closeFinishedSessionsJob.handle({ now: now.toISOString() }),
			closeFinishedSessionsJob.handle({ now: now.toISOString() })
		])) as { closed: string[] }[];
		expect(runs.filter((r) => r.closed.includes(s.sessionId))).toHaveLength(1);
		const events = await db.select().from(auditEvents).where(eq(auditEvents.sessionId, s.sessionId));
		expect(events).toHaveLength(1);
	});
});

describe('the reading-clock job', () => {
	// Hourly readings with 15 minutes' grace (defaultLimits): overdue 75 minutes after the last one.
	it('marks a session whose last reading is older than interval + grace, with when it fell due', async () => {
		const now = new Date();
		const late = await sessionFixture({ status: 'running', steps: ['running'], now, startedAgo: 3 * HOUR });
		await addReading(late, new Date(now.getTime() - 80 * MINUTE));
		await addReading(late, new Date(now.getTime() - 140 * MINUTE));
		const inGrace = await sessionFixture({ status: 'running', steps: ['running'], now, startedAgo: 3 * HOUR });
		await addReading(inGrace, new Date(now.getTime() - 70 * MINUTE));

		const first = (await readingClockJob.handle({ now: now.toISOString() })) as { marked: string[] };
		expect(first.marked).toContain(late.sessionId);
		expect(first.marked).not.toContain(inGrace.sessionId);
		// Last reading 80 minutes ago + 60 minutes' interval: it fell due 20 minutes ago.
		expect((await sessionRow(late.sessionId)).readingDueAt?.getTime()).toBe(now.getTime() - 20 * MINUTE);
		expect((await sessionRow(inGrace.sessionId)).readingDueAt).toBeNull();

		// Running again changes nothing.
		const again = (await readingClockJob.handle({ now: now.toISOString() })) as { marked: string[]; cleared: string[] };
		expect(again.marked).not.toContain(late.sessionId);
		expect(again.cleared).not.toContain(late.sessionId);
		expect((await sessionRow(late.sessionId)).readingDueAt?.getTime()).toBe(now.getTime() - 20 * MINUTE);

		// Six minutes later the other session is 76 minutes past its reading: marked, due 10 minutes before.
		const later = new Date(now.getTime() + 6 * MINUTE);
		const third = (await readingClockJob.handle({ now: later.toISOString() })) as { marked: string[] };
		expect(third.marked).toContain(inGrace.sessionId);
		expect((await sessionRow(inGrace.sessionId)).readingDueAt?.getTime()).toBe(now.getTime() - 10 * MINUTE);
	});

	it('counts from the start when nothing has been logged, and clears the mark once a reading is in', async () => {
		const now = new Date();
		const s = await sessionFixture({ status: 'running', steps: ['running'], now, startedAgo: 2 * HOUR, interval: 30 });
		await readingClockJob.handle({ now: now.toISOString() });
		// Started 120 minutes ago with a 30-minute interval: due 90 minutes ago.
		expect((await sessionRow(s.sessionId)).readingDueAt?.getTime()).toBe(now.getTime() - 90 * MINUTE);

		await addReading(s, new Date(now.getTime() - MINUTE));
		const result = (await readingClockJob.handle({ now: now.toISOString() })) as { cleared: string[] };
		expect(result.cleared).toContain(s.sessionId);
		expect((await sessionRow(s.sessionId)).readingDueAt).toBeNull();
	});

	it('keeps no mark on a paused session', async () => {
		const now = new Date();
		const s = await sessionFixture({ status: 'paused', steps: ['running'], now, startedAgo: 5 * HOUR });
		await db.update(chargeSessions).set({ readingDueAt: new Date(now.getTime() - HOUR) }).where(eq(chargeSessions.id, s.sessionId));
		const result = (await readingClockJob.handle({ now: now.toISOString() })) as { marked: string[]; cleared: string[] };
		expect(result.marked).not.toContain(s.sessionId);
		expect(result.cleared).toContain(s.sessionId);
		expect((await sessionRow(s.sessionId)).readingDueAt).toBeNull();
	});
});
