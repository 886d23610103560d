/**
 * Charge sessions: reading them (one session for the run screen, the list), and — re-exported
 * from their modules — planning (plan-context.ts, plan-save.ts) and running them
 * (transitions.ts). Every verb takes the acting member first and scopes by their workshop; a
 * viewer sees only the sessions of packs they own.
 */
import { error } from '@sveltejs/kit';
import { and, asc, desc, eq, sql, type SQL } from 'drizzle-orm';
import type { Chemistry } from '$lib/engine';
import { can } from '$lib/permissions';
import { requirePermission, type Member } from '../auth/permissions';
import { db } from '../db';
import {
	cellSpecs,
	chargers,
	chargeSessions,
	chemistryProfiles,
	packGroups,
	packs,
	sessionSteps,
	users,
	type ChargeSession,
	type SessionStep
} from '../db/schema';
import { canSeePack } from '../packs';
import { chemistryOf } from './plan-context';

export { loadPlanContext, readPlanContext, watchRoles, type PlanContext, type StartVoltsSource, type WatchChoice } from './plan-context';
export { createSession, limitsFor, savedPlanValues, updateSession, type PlanValues, type SavedPlan, type SavePlanResult } from './plan-save';
export {
	finishSession,
	finishStep,
	handOverWatch,
	pauseSession,
	restHoursAfter,
	resumeSession,
	skipStep,
	startSession,
	startStep,
	stopSession,
	REST_HOURS_AFTER_CHARGE,
	REST_HOURS_AFTER_DISCHARGE
} from './transitions';
export type { SessionChange, SessionChangeResult, SessionFailure } from './results';

export type SessionDetail = {
	session: ChargeSession;
	pack: {
		id: string;
		name: string;
		series: number;
		parallel: number;
		chemistry: Chemistry;
		cellCapacityAh: number;
		cellMaxChargeAmps: number;
		bmsFitted: boolean;
		packOwnerId: string | null;
	};
	/** Groups 1..S. */
	groups: { id: string; index: number }[];
	/** In plan order (position). */
	steps: SessionStep[];
	/** The member on watch (null when nobody is named, or they left the workshop). */
	watch: { id: string; name: string } | null;
	chargerName: string | null;
	/** What the asking member may do here. */
	permissions: { canPlan: boolean; canRun: boolean; canLog: boolean };
	/** The newest reading's taken-at time, or null. */
	lastReadingAt: Date | null;
	/** The workshop's time zone, for every time shown. */
	timeZone: string;
};

const lastReadingAt = sql<Date | null>`(select max(r.taken_at) from readings r where r.session_id = ${chargeSessions.id})`.mapWith(
	(v: unknown) => (v === null || v === undefined ? null : new Date(v as string))
);

/**
 * One session for the run screen (sessions.view): 404 when it is another workshop's, or a viewer's
 * who does not own the pack. Three queries, the last two side by side.
 */
export async function getSession(member: Member, sessionId: string): Promise<SessionDetail> {
	requirePermission(member, 'sessions.view');
	const [row] = await db
		.select({
			session: chargeSessions,
			pack: packs,
			spec: cellSpecs,
			profile: chemistryProfiles,
			watchName: users.name,
			chargerName: chargers.name,
			lastReadingAt
		})
		.from(chargeSessions)
		.innerJoin(packs, and(eq(packs.id, chargeSessions.packId), eq(packs.workshopId, chargeSessions.workshopId)))
		.innerJoin(cellSpecs, eq(cellSpecs.id, packs.cellSpecId))
		.leftJoin(chemistryProfiles, eq(chemistryProfiles.id, cellSpecs.chemistryProfileId))
		.leftJoin(users, eq(users.id, chargeSessions.watchUserId))
		.leftJoin(chargers, eq(chargers.id, chargeSessions.chargerId))
		.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)));
	if (!row || !canSeePack(member, row.pack)) error(404, 'Not found');
	const [groups, steps] = await Promise.all([
		db.select({ id: packGroups.id, index: packGroups.index }).from(packGroups).where(eq(packGroups.packId, row.pack.id)).orderBy(asc(packGroups.index)),
		db.select().from(sessionSteps).where(eq(sessionSteps.sessionId, sessionId)).orderBy(asc(sessionSteps.position))
	]);
	const { pack, spec } = row;
	return {
		session: row.session,
		pack: {
			id: pack.id,
			name: pack.name,
			series: pack.series,
			parallel: pack.parallel,
			chemistry: chemistryOf(spec, row.profile),
			cellCapacityAh: spec.capacityAh,
			cellMaxChargeAmps: spec.maxChargeAmps,
			bmsFitted: pack.bmsFitted,
			packOwnerId: pack.packOwnerId
		},
		groups,
		steps,
		watch: row.session.watchUserId && row.watchName ? { id: row.session.watchUserId, name: row.watchName } : null,
		chargerName: row.chargerName,
		permissions: {
			canPlan: can(member.role, 'plans.edit'),
			canRun: can(member.role, 'sessions.run'),
			canLog: can(member.role, 'readings.log')
		},
		lastReadingAt: row.lastReadingAt,
		timeZone: member.workshop.timeZone
	};
}

export type SessionListItem = {
	id: string;
	name: string;
	packId: string;
	packName: string;
	kind: ChargeSession['kind'];
	target: ChargeSession['target'];
	status: ChargeSession['status'];
	plannedStart: Date;
	plannedEnd: Date | null;
	/** plannedEnd moved by how late (or early) the latest started step runs; endedAt once ended. */
	expectedEnd: Date | null;
	startedAt: Date | null;
	endedAt: Date | null;
	stopReason: string;
	stepsTotal: number;
	/** Steps done or skipped. */
	stepsEnded: number;
	lastReadingAt: Date | null;
	watchName: string | null;
};

const toDate = (v: unknown) => (v === null || v === undefined ? null : new Date(v as string));

/**
 * The sessions the member may see (sessions.view), running and paused first, then planned (soonest
 * first) and drafts, then ended ones newest first; each with its progress, expected end and the
 * time of its last reading. One query.
 */
export async function listSessions(member: Member, opts: { packId?: string; limit?: number } = {}): Promise<SessionListItem[]> {
	requirePermission(member, 'sessions.view');
	const where: SQL[] = [eq(chargeSessions.workshopId, member.workshop.id)];
	if (!can(member.role, 'packs.viewAll')) where.push(eq(packs.packOwnerId, member.user.id));
	if (opts.packId) where.push(eq(chargeSessions.packId, opts.packId));
	const rows = await db
		.select({
			id: chargeSessions.id,
			name: chargeSessions.name,
			packId: chargeSessions.packId,
			packName: packs.name,
			kind: chargeSessions.kind,
			target: chargeSessions.target,
			status: chargeSessions.status,
			plannedStart: chargeSessions.plannedStart,
			plannedEnd: chargeSessions.plannedEnd,
			startedAt: chargeSessions.startedAt,
			endedAt: chargeSessions.endedAt,
			stopReason: chargeSessions.stopReason,
			watchName: users.name,
			stepsTotal: sql<number>`(select count(*) from session_steps st where st.session_id = ${chargeSessions.id})`.mapWith(Number),
			stepsEnded: sql<number>`(select count(*) from session_steps st where st.session_id = ${chargeSessions.id} and st.status in ('done', 'skipped'))`.mapWith(Number),
			lastReadingAt,
			// How late the latest started step runs, in ms: its end against plan once ended; while it
			// runs, its late start, or how far now is past its expected end, whichever is more.
			delayMs: sql<number | null>`(
				select extract(epoch from coalesce(
					st.actual_end - st.expected_end,
					greatest(st.actual_start - st.expected_start, now() - st.expected_end)
				)) * 1000
				from session_steps st
				where st.session_id = ${chargeSessions.id} and st.actual_start is not null
				order by st.actual_start desc, st.position desc limit 1
			)`.mapWith((v: unknown) => (v === null || v === undefined ? null : Number(v)))
		})
		.from(chargeSessions)
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.leftJoin(users, eq(users.id, chargeSessions.watchUserId))
		.where(and(...where))
		.orderBy(
			sql`case ${chargeSessions.status} when 'running' then 0 when 'paused' then 0 when 'planned' then 1 when 'draft' then 2 else 3 end`,
			sql`case when ${chargeSessions.status} in ('done', 'stopped') then null else ${chargeSessions.plannedStart} end asc nulls last`,
			desc(sql`coalesce(${chargeSessions.endedAt}, ${chargeSessions.createdAt})`)
		)
		.limit(opts.limit ?? 500);
	return rows.map(({ delayMs, ...r }) => {
		const ended = r.status === 'done' || r.status === 'stopped';
		const running = r.status === 'running' || r.status === 'paused';
		const expectedEnd = ended
			? r.endedAt
			: running && r.plannedEnd && delayMs !== null
				? new Date(r.plannedEnd.getTime() + delayMs)
				: r.plannedEnd;
		return { ...r, lastReadingAt: toDate(r.lastReadingAt), expectedEnd };
	});
}
