/**
 * Closes running sessions whose steps have all ended (done or skipped): the session becomes
 * 'done', recorded in the audit trail as Cellsitter's own act, and live views hear of it.
 * Safe to run twice: each session is locked and checked again before it is closed.
 */
import { and, eq, exists, inArray, not, sql } from 'drizzle-orm';
import { afterCommit } from '../alerts/deliver';
import type { AlertChanges } from '../alerts/raise';
import { compareEndedSessionSafely } from '../alerts/session-drift';
import { db } from '../db';
import { chargeSessions, sessionSteps } from '../db/schema';
import { writeAudit } from '../sessions/audit';
import { notifySession } from '../sessions/notify';
import { defineJob } from './define';

/** How the system signs what it does by itself in the audit trail. */
export const SYSTEM_ACTOR_LABEL = 'Cellsitter';

const openStep = (sessionId: typeof chargeSessions.id) =>
	db
		.select({ one: sql`1` })
		.from(sessionSteps)
		.where(and(eq(sessionSteps.sessionId, sessionId), inArray(sessionSteps.status, ['waiting', 'running'])));

const anyStep = (sessionId: typeof chargeSessions.id) =>
	db.select({ one: sql`1` }).from(sessionSteps).where(eq(sessionSteps.sessionId, sessionId));

/**
 * Closes one session if, under its row lock, it still runs and has no open step, and compares it with
 * the pack's earlier sessions (drift alerts, dispatched after the commit); returns whether it did.
 */
async function closeOne(sessionId: string, now: Date): Promise<boolean> {
	let raised: AlertChanges | null = null;
	const closed = await db.transaction(async (tx) => {
		const [session] = await tx.select().from(chargeSessions).where(eq(chargeSessions.id, sessionId)).for('update');
		if (!session || session.status !== 'running') return false;
		// Read after the lock: a step finished or started by someone meanwhile is seen here.
		const steps = await tx
			.select({ status: sessionSteps.status, actualEnd: sessionSteps.actualEnd })
			.from(sessionSteps)
			.where(eq(sessionSteps.sessionId, sessionId));
		if (steps.length === 0 || steps.some((s) => s.status === 'waiting' || s.status === 'running')) return false;
		// The session ended when its last step did (not when this job noticed), never in the future.
		const lastEnd = steps.reduce<number>((t, s) => (s.actualEnd ? Math.max(t, s.actualEnd.getTime()) : t), 0);
		const endedAt = lastEnd > 0 && lastEnd <= now.getTime() ? new Date(lastEnd) : now;
		await tx
			.update(chargeSessions)
			.set({ status: 'done', endedAt, readingDueAt: null, updatedAt: now, updatedBy: null })
			.where(eq(chargeSessions.id, sessionId));
		await writeAudit(tx, {
			workshopId: session.workshopId,
			actorId: null,
			actorLabel: SYSTEM_ACTOR_LABEL,
			kind: 'session.done',
			packId: session.packId,
			sessionId,
			subjectType: 'session',
			subjectId: sessionId,
			before: { status: session.status, endedAt: session.endedAt?.toISOString() ?? null },
			after: { status: 'done', endedAt: endedAt.toISOString(), reason: 'every step has ended' },
			at: now
		});
		await notifySession(tx, { sessionId, workshopId: session.workshopId, kind: 'status' });
		raised = await compareEndedSessionSafely(tx, sessionId, now);
		return true;
	});
	await afterCommit(raised);
	return closed;
}

/** Closes every running session whose steps have all ended; returns the ids it closed. */
export async function closeFinishedSessions(now = new Date()): Promise<{ closed: string[] }> {
	const candidates = await db
		.select({ id: chargeSessions.id })
		.from(chargeSessions)
		.where(and(eq(chargeSessions.status, 'running'), exists(anyStep(chargeSessions.id)), not(exists(openStep(chargeSessions.id)))));
	const closed: string[] = [];
	// One transaction per session: each holds only its own row lock, briefly.
	for (const { id } of candidates) if (await closeOne(id, now)) closed.push(id);
	return { closed };
}

export const closeFinishedSessionsJob = defineJob<{ now?: string }>({
	// Every 5 minutes, offset from the hour's other jobs.
	schedule: { cron: '2-59/5 * * * *' },
	options: { retryLimit: 2, retryDelay: 30, expireInSeconds: 4 * 60 },
	handle: async (data) => closeFinishedSessions(data.now ? new Date(data.now) : new Date())
});
