/**
 * Saving a plan: the server computes it again from what the planner chose (the saved plan is the
 * server's, never the browser's), checks the limits and the watcher, and writes the session, its
 * steps, the audit event and the live notice in one transaction under the pack lock.
 */
import { and, eq } from 'drizzle-orm';
import type { Limits } from '$lib/engine';
import { limitProblems, plannedStartInstant, type LimitOverrides, type SessionPatch, type SessionPlanFields } from '$lib/schemas/sessions';
import { computeSessionPlan, type SessionKind, type SessionPlan, type SessionTarget } from '$lib/session-plan';
import { requirePermission, type Member } from '../auth/permissions';
import { db, type Tx } from '../db';
import { chargeSessions, sessionSteps, type ChargeSession, type SessionStep, type StoredHandsOn } from '../db/schema';
import { newId } from '../ids';
import { lockPack } from '../packs';
import { writeAudit } from './audit';
import { notifySession } from './notify';
import { readPlanContext, watcherProblem, type PlanContext } from './plan-context';
import { conflict, invalid, notFound, type SessionFailure } from './results';

/** What a session's plan is made from, as stored (the plan form's values, resolved). */
export type PlanValues = {
	name: string;
	kind: SessionKind;
	target: SessionTarget;
	targetVolts: number | null;
	amps: number | null;
	chargerId: string | null;
	channelIds: string[];
	topUpChannelId: string | null;
	bleedLoad: { ohms: number } | { amps: number } | null;
	restHours: number | null;
	swapMinutes: number;
	plannedStart: Date;
	handsOn: StoredHandsOn;
	readingIntervalMinutes: number;
	limitOverrides: LimitOverrides;
	limitsConfirmation: string;
	/** As sent; missing groups start from the plan context. */
	startVolts: Record<string, number>;
	watchUserId: string | null;
};

export type SavedPlan = { ok: true; session: ChargeSession; steps: SessionStep[]; plan: SessionPlan };
export type SavePlanResult = SavedPlan | SessionFailure;

/**
 * The session's limits: the chemistry's defaults with the planner's overrides. Tightening is free;
 * loosening one past its default needs the confirmation to name the datasheet value
 * (`limitProblems`, which the plan form shows too).
 */
export function limitsFor(
	defaults: Limits,
	overrides: LimitOverrides,
	confirmation: string,
	readingIntervalMinutes: number
): { ok: true; limits: Limits } | SessionFailure {
	const [problem] = limitProblems(defaults, overrides, confirmation);
	if (problem) return invalid(problem.message, `limits.${problem.key}`, 'limit-refused');
	return { ok: true, limits: { ...defaults, ...overrides, readingIntervalMinutes } };
}

/** The values the engine plans from (the rest are the session's own: name, limits, watch). */
function engineFields(values: PlanValues) {
	const { name: _n, limitOverrides: _l, limitsConfirmation: _c, readingIntervalMinutes: _r, watchUserId: _w, startVolts: _s, ...fields } = values;
	return fields;
}

/** A charger or channel that is not the workshop's (or not the chosen charger's), in words. */
function equipmentProblem(ctx: PlanContext, values: PlanValues): SessionFailure | null {
	const charger = values.chargerId ? ctx.chargers.find((c) => c.id === values.chargerId) : null;
	if (values.chargerId && !charger) return invalid('Choose a charger of this workshop.', 'chargerId');
	if (values.channelIds.length > 0 && (!charger || values.channelIds.some((id) => !charger.channels.some((c) => c.id === id)))) {
		return invalid('Choose channels of the chosen charger.', 'channelIds');
	}
	if (values.topUpChannelId && !ctx.chargers.some((c) => c.channels.some((ch) => ch.id === values.topUpChannelId))) {
		return invalid('Choose a channel of one of this workshop’s chargers for the top-up.', 'topUpChannelId');
	}
	return null;
}

/** The plan for stored values, with the limits checked: all the server's own computation. */
function planFor(ctx: PlanContext, values: PlanValues) {
	const startVolts = { ...ctx.startVolts, ...values.startVolts };
	for (const id of Object.keys(values.startVolts)) {
		if (!ctx.pack.groups.some((g) => g.id === id)) return invalid('A start voltage names a group of another pack. Reload the page and try again.', 'startVolts');
	}
	const refused = equipmentProblem(ctx, values);
	if (refused) return refused;
	const plan = computeSessionPlan(ctx.pack, ctx.chargers, { ...engineFields(values), startVolts }, ctx.timeZone);
	if (!plan.ok) return invalid(plan.message, undefined, plan.reason);
	const limits = limitsFor(plan.defaultLimits, values.limitOverrides, values.limitsConfirmation, values.readingIntervalMinutes);
	if (!limits.ok) return limits;
	return { ok: true as const, plan, limits: limits.limits, startVolts };
}

/** The columns a plan writes (session row) and its steps. */
function planColumns(values: PlanValues, planned: { plan: SessionPlan; limits: Limits; startVolts: Record<string, number> }) {
	const { plan } = planned;
	return {
		...engineFields(values),
		name: values.name,
		setVolts: plan.setVoltsPerCell,
		readingIntervalMinutes: values.readingIntervalMinutes,
		limits: planned.limits as unknown as Record<string, number>,
		limitsConfirmation: values.limitsConfirmation,
		startVolts: planned.startVolts,
		planSummary: {
			totalHours: plan.totalHours,
			lowerBoundHours: plan.lowerBoundHours,
			setVoltsPerCell: plan.setVoltsPerCell,
			warnings: plan.warnings,
			unattended: plan.unattended,
			bulk: plan.bulk,
			defaultLimits: plan.defaultLimits,
			limitOverrides: values.limitOverrides
		} as Record<string, unknown>,
		plannedEnd: plan.end,
		watchUserId: values.watchUserId
	};
}

async function insertSteps(tx: Tx, sessionId: string, plan: SessionPlan): Promise<SessionStep[]> {
	if (plan.steps.length === 0) return [];
	return tx
		.insert(sessionSteps)
		.values(
			plan.steps.map((s) => ({
				id: newId(),
				sessionId,
				position: s.position,
				groupId: s.groupId,
				channelId: s.channelId,
				channelLabel: s.channelLabel.slice(0, 80),
				role: s.role,
				setVolts: s.setVolts,
				amps: s.amps,
				expectedStart: s.expectedStart,
				expectedEnd: s.expectedEnd,
				preHours: s.preHours,
				ccHours: s.ccHours,
				cvHours: s.cvHours,
				ah: s.ah,
				unattendedChargeHours: s.unattendedChargeHours,
				unattendedHoldHours: s.unattendedHoldHours
			}))
		)
		.returning();
}

const startOf = (text: string, timeZone: string) => plannedStartInstant(text, timeZone);

/** A summary of a session for the audit trail (what a reader of the history wants to see). */
function auditView(s: Pick<ChargeSession, 'status' | 'kind' | 'target' | 'plannedStart' | 'plannedEnd' | 'watchUserId' | 'name'>, steps?: number) {
	return {
		name: s.name,
		status: s.status,
		kind: s.kind,
		target: s.target,
		plannedStart: s.plannedStart.toISOString(),
		plannedEnd: s.plannedEnd?.toISOString() ?? null,
		watchUserId: s.watchUserId,
		...(steps !== undefined ? { steps } : {})
	};
}

/**
 * A new session (plans.edit) from the plan form. The plan is computed here; step times a client
 * might send are not read. Saved as 'planned', or 'draft' when asked.
 */
export async function createSession(member: Member, input: SessionPlanFields): Promise<SavePlanResult> {
	requirePermission(member, 'plans.edit');
	const plannedStart = startOf(input.plannedStart, member.workshop.timeZone);
	if (!plannedStart) return invalid('Give the start as a date and time (e.g. 2026-03-28T21:00).', 'plannedStart');
	const values: PlanValues = {
		name: input.name,
		kind: input.kind,
		target: input.target,
		targetVolts: input.targetVolts,
		amps: input.amps,
		chargerId: input.chargerId,
		channelIds: input.channelIds,
		topUpChannelId: input.topUpChannelId,
		bleedLoad: input.bleedLoad,
		restHours: input.restHours,
		swapMinutes: input.swapMinutes,
		plannedStart,
		handsOn: input.handsOn,
		readingIntervalMinutes: input.readingIntervalMinutes,
		limitOverrides: input.limits,
		limitsConfirmation: input.limitsConfirmation,
		startVolts: input.startVolts,
		watchUserId: input.watchUserId ?? member.user.id
	};
	return db.transaction(async (tx): Promise<SavePlanResult> => {
		const pack = await lockPack(tx, member, input.packId);
		if (!pack) return notFound();
		const watcher = await watcherProblem(tx, member.workshop.id, values.watchUserId, 'watchUserId');
		if (watcher) return watcher;
		const ctx = await readPlanContext(tx, member, pack);
		const planned = planFor(ctx, values);
		if (!planned.ok) return planned;
		const id = newId();
		const status = input.draft ? ('draft' as const) : ('planned' as const);
		const [session] = await tx
			.insert(chargeSessions)
			.values({
				id,
				workshopId: member.workshop.id,
				packId: pack.id,
				...planColumns(values, planned),
				status,
				createdBy: member.user.id,
				updatedBy: member.user.id
			})
			.returning();
		const steps = await insertSteps(tx, id, planned.plan);
		await writeAudit(tx, {
			workshopId: member.workshop.id,
			actorId: member.user.id,
			actorLabel: member.user.name,
			kind: 'session.create',
			packId: pack.id,
			sessionId: id,
			subjectType: 'session',
			subjectId: id,
			after: auditView(session, steps.length)
		});
		await notifySession(tx, { sessionId: id, workshopId: member.workshop.id, kind: 'plan' });
		return { ok: true, session, steps, plan: planned.plan };
	});
}

/**
 * The stored plan values of a session (what the plan form shows when editing it; the limits the
 * planner changed are `limitOverrides`), to re-plan with a patch on top.
 */
export function savedPlanValues(s: ChargeSession): PlanValues {
	const overrides = (s.planSummary as { limitOverrides?: LimitOverrides }).limitOverrides ?? {};
	return {
		name: s.name,
		kind: s.kind,
		target: s.target,
		targetVolts: s.targetVolts,
		amps: s.amps,
		chargerId: s.chargerId,
		channelIds: s.channelIds,
		topUpChannelId: s.topUpChannelId,
		bleedLoad: s.bleedLoad ?? null,
		restHours: s.restHours,
		swapMinutes: s.swapMinutes,
		plannedStart: s.plannedStart,
		handsOn: s.handsOn,
		readingIntervalMinutes: s.readingIntervalMinutes,
		limitOverrides: overrides,
		limitsConfirmation: s.limitsConfirmation,
		startVolts: s.startVolts,
		watchUserId: s.watchUserId
	};
}

/**
 * Changes a draft or planned session (plans.edit): only the keys sent change, the plan is computed
 * again and its steps replaced; `draft` moves it between draft and planned. The audit event holds
 * the changed keys before and after.
 */
export async function updateSession(member: Member, sessionId: string, patch: SessionPatch): Promise<SavePlanResult> {
	requirePermission(member, 'plans.edit');
	const [found] = await db
		.select({ packId: chargeSessions.packId })
		.from(chargeSessions)
		.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)));
	if (!found) return notFound();
	let plannedStart: Date | undefined;
	if (patch.plannedStart !== undefined) {
		const at = startOf(patch.plannedStart, member.workshop.timeZone);
		if (!at) return invalid('Give the start as a date and time (e.g. 2026-03-28T21:00).', 'plannedStart');
		plannedStart = at;
	}
	return db.transaction(async (tx): Promise<SavePlanResult> => {
		const pack = await lockPack(tx, member, found.packId);
		if (!pack) return notFound();
		const [current] = await tx
			.select()
			.from(chargeSessions)
			.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)))
			.for('update');
		if (!current) return notFound();
		if (current.status !== 'draft' && current.status !== 'planned') {
			return conflict(
				`This session is ${current.status}, so its plan stays as it is. To charge differently, stop it and plan a new session.`,
				'wrong-state'
			);
		}
		const before = savedPlanValues(current);
		const { draft, limits, startVolts, plannedStart: _text, ...rest } = patch;
		const values: PlanValues = {
			...before,
			...rest,
			...(plannedStart ? { plannedStart } : {}),
			...(limits !== undefined ? { limitOverrides: limits } : {}),
			...(startVolts !== undefined ? { startVolts: { ...before.startVolts, ...startVolts } } : {}),
			// As on create: nobody named means the planner keeps the watch.
			...(patch.watchUserId === null ? { watchUserId: member.user.id } : {})
		};
		if (patch.watchUserId !== undefined) {
			const watcher = await watcherProblem(tx, member.workshop.id, values.watchUserId, 'watchUserId');
			if (watcher) return watcher;
		}
		const ctx = await readPlanContext(tx, member, pack);
		const planned = planFor(ctx, values);
		if (!planned.ok) return planned;
		const status = draft === undefined ? current.status : draft ? 'draft' : 'planned';
		const [session] = await tx
			.update(chargeSessions)
			.set({ ...planColumns(values, planned), status, updatedBy: member.user.id, updatedAt: new Date() })
			.where(eq(chargeSessions.id, sessionId))
			.returning();
		await tx.delete(sessionSteps).where(eq(sessionSteps.sessionId, sessionId));
		const steps = await insertSteps(tx, sessionId, planned.plan);
		const changedKeys = Object.keys(patch) as (keyof SessionPatch)[];
		const pick = (v: PlanValues & { status: string }) =>
			Object.fromEntries(
				changedKeys.map((k) => {
					const key = k === 'limits' ? 'limitOverrides' : k === 'draft' ? 'status' : k;
					const value = (v as Record<string, unknown>)[key];
					return [k === 'draft' ? 'status' : k, value instanceof Date ? value.toISOString() : value];
				})
			);
		await writeAudit(tx, {
			workshopId: member.workshop.id,
			actorId: member.user.id,
			actorLabel: member.user.name,
			kind: 'session.update',
			packId: pack.id,
			sessionId,
			subjectType: 'session',
			subjectId: sessionId,
			before: { ...pick({ ...before, status: current.status }), plannedEnd: current.plannedEnd?.toISOString() ?? null },
			after: { ...pick({ ...values, status }), plannedEnd: session.plannedEnd?.toISOString() ?? null }
		});
		await notifySession(tx, { sessionId, workshopId: member.workshop.id, kind: 'plan' });
		return { ok: true, session, steps, plan: planned.plan };
	});
}
