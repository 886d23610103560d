/**
 * A session's state changes and its steps. Each runs in one transaction that locks the session
 * row (`select … for update`), checks the state machine against what it read under the lock,
 * writes the change, its audit event and the live notice:
 *
 *   draft → planned (updateSession)  planned → running  running ⇄ paused
 *   running | paused → stopped (with a reason)  running | paused → done (every step ended)
 *
 * Owners and builders start sessions (plans.edit); anyone who may run one — owner, builder, any
 * technician — may pause, resume, stop it at once, start and end steps and take the watch.
 */
import { and, eq, inArray, isNull, ne, sql } from 'drizzle-orm';
import type { Action } from '$lib/permissions';
import { afterCommit } from '../alerts/deliver';
import type { AlertChanges } from '../alerts/raise';
import { compareEndedSessionSafely } from '../alerts/session-drift';
import { requirePermission, type Member } from '../auth/permissions';
import { db, type Tx } from '../db';
import { alerts, chargeSessions, sessionSteps, users, type ChargeSession, type SessionStep } from '../db/schema';
import { lockPack } from '../packs';
import { writeAudit, type AuditKind } from './audit';
import { notifySession } from './notify';
import { watcherProblem } from './plan-context';
import { conflict, invalid, notFound, type SessionChangeResult } from './results';

/**
 * Rest before a group's rest reading, hours: 2 h after a charge, 5 h after a discharge (a bleed) —
 * the rest times of TI's test procedure in document SLVUDW8 (references.md §2), the same source
 * `socFromRestVoltage` reads its curves by. The one place these numbers live.
 */
export const REST_HOURS_AFTER_CHARGE = 2;
export const REST_HOURS_AFTER_DISCHARGE = 5;

const MS_PER_HOUR = 3_600_000;

/** Hours a group rests after a step of this role before its rest reading; null when none is asked. */
export function restHoursAfter(role: string): number | null {
	if (role === 'bleed') return REST_HOURS_AFTER_DISCHARGE;
	if (role === 'rest') return null;
	return REST_HOURS_AFTER_CHARGE;
}

function restDue(role: string, endedAt: Date): Date | null {
	const hours = restHoursAfter(role);
	return hours === null ? null : new Date(endedAt.getTime() + hours * MS_PER_HOUR);
}

type Status = ChargeSession['status'];

const ended = (status: Status) => status === 'done' || status === 'stopped';

const endedMessage = 'This session has ended. Plan a new session to charge again.';

/** Why an action does not fit the session's state, in words. */
function wrongState(action: 'start' | 'pause' | 'resume' | 'stop' | 'finish' | 'step', status: Status): string {
	if (ended(status)) return action === 'stop' ? 'This session has already ended.' : endedMessage;
	if (status === 'draft') return 'This session is a draft: save it as planned before starting it.';
	switch (action) {
		case 'start':
			return status === 'paused' ? 'This session is paused: resume it instead of starting it.' : 'This session is already running.';
		case 'pause':
			return status === 'paused' ? 'This session is already paused.' : 'This session has not started, so there is nothing to pause.';
		case 'resume':
			return status === 'running' ? 'This session is already running.' : 'This session has not started: start it instead.';
		case 'stop':
			return 'This session has not started, so there is nothing to stop.';
		case 'finish':
			return 'This session has not started, so it cannot be finished.';
		case 'step':
			return status === 'paused'
				? 'This session is paused: resume it before starting a step.'
				: 'Start the session before its steps.';
	}
}

async function lockSession(tx: Tx, member: Member, sessionId: string): Promise<ChargeSession | undefined> {
	const [row] = await tx
		.select()
		.from(chargeSessions)
		.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)))
		.for('update');
	return row;
}

/**
 * Runs `work` on the locked session of the member's workshop (404 when there is none). With
 * `packFirst`, the pack row is locked before the session (the order createSession and updatePack
 * take), so that two sessions of one pack never start side by side. Alerts `work` raised (the drift
 * between sessions when one is done) go into `raised`; their deliveries are dispatched after the commit.
 */
async function withSession(
	member: Member,
	sessionId: string,
	action: Action,
	work: (tx: Tx, session: ChargeSession, raised: AlertChanges[]) => Promise<SessionChangeResult>,
	packFirst = false
): Promise<SessionChangeResult> {
	requirePermission(member, action);
	let packId: string | null = null;
	if (packFirst) {
		const [found] = await db
			.select({ packId: chargeSessions.packId })
			.from(chargeSessions)
			.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)));
		if (!found) return notFound();
		packId = found.packId;
	}
	const raised: AlertChanges[] = [];
	const result = await db.transaction(async (tx) => {
		if (packId && !(await lockPack(tx, member, packId))) return notFound();
		const session = await lockSession(tx, member, sessionId);
		if (!session) return notFound();
		return work(tx, session, raised);
	});
	for (const changes of raised) await afterCommit(changes);
	return result;
}

/** Marks the session done (its audit event and notice) and compares it with the pack's earlier sessions. */
async function markDone(tx: Tx, member: Member, s: ChargeSession, raised: AlertChanges[], note: Record<string, unknown> = {}) {
	const now = new Date();
	const session = await setStatus(tx, member, s, 'session.done', { status: 'done', endedAt: now, readingDueAt: null }, note);
	raised.push(await compareEndedSessionSafely(tx, s.id, now));
	return session;
}

const actor = (member: Member) => ({ workshopId: member.workshop.id, actorId: member.user.id, actorLabel: member.user.name });

/** Writes the new status (and more columns), its audit event and the notice. */
async function setStatus(
	tx: Tx,
	member: Member,
	current: ChargeSession,
	kind: AuditKind,
	set: Partial<typeof chargeSessions.$inferInsert> & { status: Status },
	note: Record<string, unknown> = {}
): Promise<ChargeSession> {
	const now = new Date();
	const [session] = await tx
		.update(chargeSessions)
		.set({ ...set, updatedBy: member.user.id, updatedAt: now })
		.where(eq(chargeSessions.id, current.id))
		.returning();
	await writeAudit(tx, {
		...actor(member),
		kind,
		packId: current.packId,
		sessionId: current.id,
		subjectType: 'session',
		subjectId: current.id,
		before: { status: current.status },
		after: { status: set.status, ...note }
	});
	await notifySession(tx, { sessionId: current.id, workshopId: current.workshopId, kind: 'status' });
	return session;
}

/** Starts a planned session (plans.edit). A pack runs one session at a time. */
export async function startSession(member: Member, sessionId: string): Promise<SessionChangeResult> {
	return withSession(
		member,
		sessionId,
		'plans.edit',
		async (tx, s) => {
			if (s.status !== 'planned') return conflict(wrongState('start', s.status), 'wrong-state');
			const [other] = await tx
				.select({ id: chargeSessions.id, name: chargeSessions.name })
				.from(chargeSessions)
				.where(and(eq(chargeSessions.packId, s.packId), ne(chargeSessions.id, s.id), inArray(chargeSessions.status, ['running', 'paused'])))
				.limit(1);
			if (other) {
				return conflict(
					`Another session of this pack${other.name ? ` (“${other.name}”)` : ''} is running or paused. Finish or stop it before starting this one.`,
					'pack-busy'
				);
			}
			const now = new Date();
			return { ok: true, session: await setStatus(tx, member, s, 'session.start', { status: 'running', startedAt: now }) };
		},
		true
	);
}

/** Pauses a running session (sessions.run): any technician may, at once. */
export async function pauseSession(member: Member, sessionId: string): Promise<SessionChangeResult> {
	return withSession(member, sessionId, 'sessions.run', async (tx, s) => {
		if (s.status !== 'running') return conflict(wrongState('pause', s.status), 'wrong-state');
		return { ok: true, session: await setStatus(tx, member, s, 'session.pause', { status: 'paused' }) };
	});
}

/** Resumes a paused session (sessions.run). */
export async function resumeSession(member: Member, sessionId: string): Promise<SessionChangeResult> {
	return withSession(member, sessionId, 'sessions.run', async (tx, s) => {
		if (s.status !== 'paused') return conflict(wrongState('resume', s.status), 'wrong-state');
		return { ok: true, session: await setStatus(tx, member, s, 'session.resume', { status: 'running' }) };
	});
}

/**
 * Ends the steps still running when the session ends early: they are marked skipped at `at`, and
 * their groups' rest readings are asked for as after any other step.
 */
async function endRunningSteps(tx: Tx, sessionId: string, at: Date) {
	const running = await tx
		.select({ id: sessionSteps.id, role: sessionSteps.role })
		.from(sessionSteps)
		.where(and(eq(sessionSteps.sessionId, sessionId), eq(sessionSteps.status, 'running')));
	for (const role of new Set(running.map((r) => r.role))) {
		await tx
			.update(sessionSteps)
			.set({ status: 'skipped', actualEnd: at, restReadingDueAt: restDue(role, at) })
			.where(and(eq(sessionSteps.sessionId, sessionId), eq(sessionSteps.status, 'running'), eq(sessionSteps.role, role)));
	}
	return running.length;
}

/** Stops a running or paused session with its reason (sessions.run): any technician may, at once. */
export async function stopSession(member: Member, sessionId: string, reason: string): Promise<SessionChangeResult> {
	const why = reason.trim();
	if (why.length === 0) return invalid('Say why the session stops.', 'reason');
	if (why.length > 500) return invalid('Use at most 500 characters for the reason.', 'reason');
	return withSession(member, sessionId, 'sessions.run', async (tx, s) => {
		if (s.status !== 'running' && s.status !== 'paused') return conflict(wrongState('stop', s.status), 'wrong-state');
		const now = new Date();
		const stepsEnded = await endRunningSteps(tx, s.id, now);
		const session = await setStatus(tx, member, s, 'session.stop', { status: 'stopped', stopReason: why, endedAt: now, readingDueAt: null }, { reason: why, stepsEnded });
		return { ok: true, session };
	});
}

/** Steps not yet ended (waiting or running). */
async function stepsLeft(tx: Tx, sessionId: string): Promise<number> {
	const [row] = await tx
		.select({ n: sql<number>`count(*)`.mapWith(Number) })
		.from(sessionSteps)
		.where(and(eq(sessionSteps.sessionId, sessionId), inArray(sessionSteps.status, ['waiting', 'running'])));
	return row.n;
}

/** Marks a running or paused session done once every step has ended (sessions.run). */
export async function finishSession(member: Member, sessionId: string): Promise<SessionChangeResult> {
	return withSession(member, sessionId, 'sessions.run', async (tx, s, raised) => {
		if (s.status !== 'running' && s.status !== 'paused') return conflict(wrongState('finish', s.status), 'wrong-state');
		const left = await stepsLeft(tx, s.id);
		if (left > 0) {
			return conflict(`${left === 1 ? 'One step has' : `${left} steps have`} not ended yet: finish or skip ${left === 1 ? 'it' : 'them'} first.`, 'steps-left');
		}
		return { ok: true, session: await markDone(tx, member, s, raised) };
	});
}

/** Hands the watch to another member who may run sessions (sessions.run); recorded with before and after. */
export async function handOverWatch(member: Member, sessionId: string, userId: string): Promise<SessionChangeResult> {
	return withSession(member, sessionId, 'sessions.run', async (tx, s) => {
		if (ended(s.status)) return conflict('This session has ended, so there is no watch to hand over.', 'wrong-state');
		const refused = await watcherProblem(tx, member.workshop.id, userId, 'userId');
		if (refused) return refused;
		if (s.watchUserId === userId) return { ok: true, session: s };
		const named = await tx
			.select({ id: users.id, name: users.name })
			.from(users)
			.where(inArray(users.id, [userId, ...(s.watchUserId ? [s.watchUserId] : [])]));
		const nameOf = (id: string | null) => named.find((u) => u.id === id)?.name ?? null;
		const [session] = await tx
			.update(chargeSessions)
			.set({ watchUserId: userId, updatedBy: member.user.id, updatedAt: new Date() })
			.where(eq(chargeSessions.id, s.id))
			.returning();
		await writeAudit(tx, {
			...actor(member),
			kind: 'watch.handover',
			packId: s.packId,
			sessionId: s.id,
			subjectType: 'session',
			subjectId: s.id,
			before: { watchUserId: s.watchUserId, watchName: nameOf(s.watchUserId) },
			after: { watchUserId: userId, watchName: nameOf(userId) }
		});
		await notifySession(tx, { sessionId: s.id, workshopId: s.workshopId, kind: 'watch' });
		return { ok: true, session };
	});
}

async function lockStep(tx: Tx, sessionId: string, stepId: string): Promise<SessionStep | undefined> {
	const [row] = await tx
		.select()
		.from(sessionSteps)
		.where(and(eq(sessionSteps.id, stepId), eq(sessionSteps.sessionId, sessionId)))
		.for('update');
	return row;
}

const groupWords = (step: Pick<SessionStep, 'groupId'>, index: Map<string, number>) =>
	step.groupId ? `group ${index.get(step.groupId) ?? '?'}` : 'the whole pack';

/** Writes a step's change, its audit event and the notice; ends the session when no step is left. */
/**
 * Ending a step answers its "step finished" note: the note clears and counts as acknowledged by
 * the person who ended the step (nothing is left for the inbox to ask about), with its audit row.
 */
async function settleStepFinished(tx: Tx, member: Member, s: ChargeSession, step: SessionStep) {
	const now = new Date();
	const settled = await tx
		.update(alerts)
		.set({ clearedAt: sql`coalesce(${alerts.clearedAt}, ${now.toISOString()}::timestamptz)`, acknowledgedAt: now, acknowledgedBy: member.user.id, ackNote: 'Step ended.' })
		.where(
			and(
				eq(alerts.sessionId, s.id),
				eq(alerts.kind, 'step-finished'),
				step.groupId === null ? isNull(alerts.groupId) : eq(alerts.groupId, step.groupId),
				isNull(alerts.acknowledgedAt)
			)
		)
		.returning({ id: alerts.id });
	for (const { id } of settled) {
		await writeAudit(tx, {
			...actor(member),
			kind: 'alert.acknowledge',
			packId: s.packId,
			sessionId: s.id,
			subjectType: 'alert',
			subjectId: id,
			before: { acknowledgedAt: null },
			after: { acknowledgedAt: now.toISOString(), note: 'Step ended.' }
		});
	}
	if (settled.length) await notifySession(tx, { sessionId: s.id, workshopId: s.workshopId, kind: 'alert' });
}

async function changeStep(
	tx: Tx,
	member: Member,
	s: ChargeSession,
	step: SessionStep,
	kind: AuditKind,
	set: Partial<typeof sessionSteps.$inferInsert> & { status: SessionStep['status'] },
	raised: AlertChanges[]
): Promise<SessionChangeResult> {
	const [updated] = await tx.update(sessionSteps).set(set).where(eq(sessionSteps.id, step.id)).returning();
	const iso = (d: Date | null | undefined) => (d ? d.toISOString() : null);
	await writeAudit(tx, {
		...actor(member),
		kind,
		packId: s.packId,
		sessionId: s.id,
		subjectType: 'step',
		subjectId: step.id,
		before: { status: step.status, actualStart: iso(step.actualStart), actualEnd: iso(step.actualEnd) },
		after: { status: updated.status, actualStart: iso(updated.actualStart), actualEnd: iso(updated.actualEnd), position: step.position }
	});
	await notifySession(tx, { sessionId: s.id, workshopId: s.workshopId, kind: 'step' });
	if (set.status !== 'running') await settleStepFinished(tx, member, s, step);
	let session = s;
	if (set.status !== 'running' && (await stepsLeft(tx, s.id)) === 0) {
		session = await markDone(tx, member, s, raised, { lastStepId: step.id });
	}
	return { ok: true, session, step: updated };
}

/**
 * Starts a waiting step of a running session (sessions.run). A channel charges one step at a
 * time, and a group is on one channel at a time: either busy → 409 in words.
 */
export async function startStep(member: Member, sessionId: string, stepId: string): Promise<SessionChangeResult> {
	return withSession(member, sessionId, 'sessions.run', async (tx, s, raised) => {
		if (s.status !== 'running') return conflict(wrongState('step', s.status), 'wrong-state');
		const step = await lockStep(tx, s.id, stepId);
		if (!step) return notFound();
		if (step.status === 'running') return conflict('This step is already running.', 'wrong-state');
		if (step.status !== 'waiting') return conflict('This step has ended; start the next one.', 'wrong-state');
		const running = await tx
			.select()
			.from(sessionSteps)
			.where(and(eq(sessionSteps.sessionId, s.id), eq(sessionSteps.status, 'running')));
		const groupIndex = new Map<string, number>();
		if (running.length > 0) {
			const rows = await tx.execute<{ id: string; index: number }>(
				sql`select id, index from pack_groups where pack_id = ${s.packId}`
			);
			for (const r of rows) groupIndex.set(r.id, Number(r.index));
		}
		const sameChannel = running.find((r) =>
			step.channelId !== null ? r.channelId === step.channelId : r.channelId === null && r.channelLabel === step.channelLabel
		);
		if (sameChannel) {
			return conflict(
				`${sameChannel.channelLabel || 'That channel'} is still on ${groupWords(sameChannel, groupIndex)}: end that step before starting this one.`,
				'channel-busy'
			);
		}
		const sameGroup = running.find((r) => r.groupId === step.groupId || r.groupId === null || step.groupId === null);
		if (sameGroup) {
			return conflict(
				`${groupWords(sameGroup, groupIndex).replace(/^./, (c) => c.toUpperCase())} is still on ${sameGroup.channelLabel || 'another channel'}: end that step before starting this one.`,
				'group-busy'
			);
		}
		return changeStep(tx, member, s, step, 'step.start', { status: 'running', actualStart: new Date() }, raised);
	});
}

/**
 * Ends a running step (sessions.run) and asks for the group's rest reading once it has rested
 * (`restReadingDueAt`). When it was the last step, the session is done.
 */
export async function finishStep(member: Member, sessionId: string, stepId: string): Promise<SessionChangeResult> {
	return withSession(member, sessionId, 'sessions.run', async (tx, s, raised) => {
		if (s.status !== 'running' && s.status !== 'paused') return conflict(wrongState('step', s.status), 'wrong-state');
		const step = await lockStep(tx, s.id, stepId);
		if (!step) return notFound();
		if (step.status === 'waiting') return conflict('This step has not started: start it, or skip it.', 'wrong-state');
		if (step.status !== 'running') return conflict('This step has already ended.', 'wrong-state');
		const now = new Date();
		return changeStep(tx, member, s, step, 'step.done', { status: 'done', actualEnd: now, restReadingDueAt: restDue(step.role, now) }, raised);
	});
}

/** Skips a waiting or running step (sessions.run); a running one ends now and asks for its rest reading. */
export async function skipStep(member: Member, sessionId: string, stepId: string): Promise<SessionChangeResult> {
	return withSession(member, sessionId, 'sessions.run', async (tx, s, raised) => {
		if (s.status !== 'running' && s.status !== 'paused') return conflict(wrongState('step', s.status), 'wrong-state');
		const step = await lockStep(tx, s.id, stepId);
		if (!step) return notFound();
		if (step.status !== 'waiting' && step.status !== 'running') return conflict('This step has already ended.', 'wrong-state');
		const now = new Date();
		return changeStep(
			tx,
			member,
			s,
			step,
			'step.skip',
			step.status === 'running' ? { status: 'skipped', actualEnd: now, restReadingDueAt: restDue(step.role, now) } : { status: 'skipped' },
			raised
		);
	});
}
