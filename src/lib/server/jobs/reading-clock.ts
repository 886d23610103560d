/**
 * The reading clock: every minute, marks running sessions whose last reading is older than their
 * reading interval plus the limits' grace (the engine's `checkClock` rule) by setting
 * `reading_due_at` to when the reading fell due, and clears the mark once a newer reading is in.
 * The run screen and the alerts read the mark. Safe to run twice: the mark follows from the
 * readings alone, and each change is made under the session's row lock after reading again.
 */
import { and, eq, isNotNull, max, ne, sql } from 'drizzle-orm';
import { checkClock, type Limits } from '$lib/engine';
import { db, type Tx } from '../db';
import { chargeSessions, readings } from '../db/schema';
import { notifySession } from '../sessions/notify';
import { defineJob } from './define';

const MS_PER_MINUTE = 60_000;
/** The engine's default grace (defaultLimits) for a session whose stored limits lack one. */
const DEFAULT_GRACE_MINUTES = 15;

type ClockRow = {
	readingIntervalMinutes: number;
	limits: Record<string, number>;
	startedAt: Date | null;
	lastReadingAt: Date | null;
};

/** When the session's next reading fell due, if it is overdue at `now` by the engine's rule; else null. */
export function readingDueAt(row: ClockRow, now: Date): Date | null {
	const since = row.lastReadingAt ?? row.startedAt;
	if (!since) return null;
	const grace = Number.isFinite(row.limits.readingGraceMinutes) ? row.limits.readingGraceMinutes : DEFAULT_GRACE_MINUTES;
	// The session's own interval is the one the planner chose; the limits carry the grace.
	const limits = { ...(row.limits as unknown as Limits), readingIntervalMinutes: row.readingIntervalMinutes, readingGraceMinutes: grace };
	const overdue = checkClock({ limits, lastReadingAt: row.lastReadingAt, stepStartedAt: row.startedAt ?? undefined, now }).some(
		(a) => a.kind === 'reading-overdue'
	);
	return overdue ? new Date(since.getTime() + row.readingIntervalMinutes * MS_PER_MINUTE) : null;
}

const lastReading = (tx: Tx | typeof db, sessionId: typeof chargeSessions.id | string) =>
	tx.select({ at: max(readings.takenAt) }).from(readings).where(eq(readings.sessionId, sessionId));

/** Re-reads one session under its row lock and sets or clears its mark; returns whether it changed. */
async function updateOne(sessionId: string, now: Date): Promise<boolean> {
	return db.transaction(async (tx) => {
		const [session] = await tx.select().from(chargeSessions).where(eq(chargeSessions.id, sessionId)).for('update');
		if (!session || session.status !== 'running') return false;
		const [{ at }] = await lastReading(tx, sessionId);
		const due = readingDueAt({ ...session, lastReadingAt: at }, now);
		if ((due?.getTime() ?? null) === (session.readingDueAt?.getTime() ?? null)) return false;
		await tx.update(chargeSessions).set({ readingDueAt: due }).where(eq(chargeSessions.id, sessionId));
		await notifySession(tx, { sessionId, workshopId: session.workshopId, kind: 'status' });
		return true;
	});
}

/** Marks (and unmarks) readings due on every running session; returns the ids whose mark changed. */
export async function runReadingClock(now = new Date()): Promise<{ marked: string[]; cleared: string[] }> {
	// One query for every running session with its latest reading (readings_session_taken_idx).
	const rows = await db
		.select({
			id: chargeSessions.id,
			readingIntervalMinutes: chargeSessions.readingIntervalMinutes,
			limits: chargeSessions.limits,
			startedAt: chargeSessions.startedAt,
			readingDueAt: chargeSessions.readingDueAt,
			lastReadingAt: sql<Date | null>`(${lastReading(db, chargeSessions.id)})`.mapWith(chargeSessions.startedAt)
		})
		.from(chargeSessions)
		.where(eq(chargeSessions.status, 'running'));
	const marked: string[] = [];
	const cleared: string[] = [];
	for (const row of rows) {
		const due = readingDueAt(row, now);
		if ((due?.getTime() ?? null) === (row.readingDueAt?.getTime() ?? null)) continue;
		// Only the few whose mark changes take a lock, one session at a time.
		if (await updateOne(row.id, now)) (due ? marked : cleared).push(row.id);
	}
	// A paused, stopped or finished session asks for no readings: no mark stays on it.
	const idle = await db
		.update(chargeSessions)
		.set({ readingDueAt: null })
		.where(and(ne(chargeSessions.status, 'running'), isNotNull(chargeSessions.readingDueAt)))
		.returning({ id: chargeSessions.id });
	cleared.push(...idle.map((r) => r.id));
	return { marked, cleared };
}

/**
 * The clock's marks on a workshop's running sessions: session id → when its reading fell due. For
 * lists; the caller shows only the sessions the member may see.
 */
export async function readingMarks(workshopId: string): Promise<Map<string, Date>> {
	const rows = await db
		.select({ id: chargeSessions.id, at: chargeSessions.readingDueAt })
		.from(chargeSessions)
		.where(and(eq(chargeSessions.workshopId, workshopId), eq(chargeSessions.status, 'running'), isNotNull(chargeSessions.readingDueAt)));
	return new Map(rows.map((r) => [r.id, r.at!]));
}

export const readingClockJob = defineJob<{ now?: string }>({
	schedule: { cron: '* * * * *' },
	options: { retryLimit: 1, expireInSeconds: 50 },
	handle: async (data) => runReadingClock(data.now ? new Date(data.now) : new Date())
});
