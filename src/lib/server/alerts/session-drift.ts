/**
 * Drift between sessions (issue 9, item 6): when a session is done, each group is compared with
 * the pack's earlier done sessions with the same target (the engine's `compareSessions`), and a
 * group that moved away from the others by more than the session's drift warning limit raises a
 * `session-drift` warning for the session's watchers, with the numbers in its message and details.
 *
 * What a session's snapshot holds, per group (volts per cell; whole-pack readings are not per
 * group and are left out):
 * - **end of charge**: the group's newest volts reading taken while its last charge step ran
 *   (role charge, top-up or balance, on the group or on the whole pack; between the step's actual
 *   start and end). A group without such a reading has no end value in that session.
 * - **at rest**: the group's newest volts reading taken at least REST_HOURS_AFTER_CHARGE less 15
 *   minutes after that step ended (the run screen asks for it two hours after; a quarter of an hour
 *   early still counts). A rest reading logged after the session ended counts the next time.
 *
 * Only done sessions are compared: a stopped session is not a finished charge. The target must
 * match: 'full', 'storage', or the same chosen voltage to the millivolt. The ten most recent
 * earlier sessions are read (the engine uses the newest one that has the group).
 */
import { eq, sql } from 'drizzle-orm';
import { compareSessions, type SessionSnapshot } from '$lib/engine';
import type { Tx } from '../db';
import { cellSpecs, chargeSessions, chemistryProfiles, packs } from '../db/schema';
import { chemistryOf } from '../sessions/plan-context';
import { sessionLimits } from '../sessions/run-view';
import { REST_HOURS_AFTER_CHARGE } from '../sessions/transitions';
import { storeConditions, type AlertChanges, type Found } from './raise';

/** What this evaluation can raise. */
export const SESSION_DRIFT_KINDS = ['session-drift'] as const;

/** Earlier comparable sessions read at most. */
const EARLIER_SESSIONS = 10;
/** How early before the asked rest time a reading still counts as at rest. */
const REST_SLACK_MINUTES = 15;

const none = (): AlertChanges => ({ raised: [], cleared: 0, deliveries: [] });

/** The target a session is compared by: 'full', 'storage' or 'volts:3.600'; null when it has none. */
export function targetKey(session: { target: string; targetVolts: number | null }): string | null {
	if (session.target !== 'volts') return session.target;
	return session.targetVolts === null ? null : `volts:${session.targetVolts.toFixed(3)}`;
}

type SnapshotRow = {
	session_id: string;
	ended_at: string | Date;
	group_id: string;
	index: number;
	end_id: string | number | null;
	end_volts: number | null;
	rest_volts: number | null;
};

/**
 * Compares the session that has just become done with the pack's earlier done sessions of the same
 * target and stores any `session-drift` warnings (with their outbox rows). Call it in the
 * transaction that marks the session done; hand the result to `afterCommit` after the commit.
 * Does nothing for a session that is not done. Two queries: the session, then every snapshot.
 */
export async function compareEndedSession(tx: Tx, sessionId: string, now = new Date()): Promise<AlertChanges> {
	const [row] = await tx
		.select({ session: chargeSessions, pack: packs, spec: cellSpecs, profile: chemistryProfiles })
		.from(chargeSessions)
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.innerJoin(cellSpecs, eq(cellSpecs.id, packs.cellSpecId))
		.leftJoin(chemistryProfiles, eq(chemistryProfiles.id, cellSpecs.chemistryProfileId))
		.where(eq(chargeSessions.id, sessionId));
	if (!row || row.session.status !== 'done' || !row.session.endedAt) return none();
	const { session, pack, spec, profile } = row;
	const endedAt = row.session.endedAt;
	const target = targetKey(session);
	if (target === null) return none();
	const limits = sessionLimits({
		session,
		pack: { series: pack.series, parallel: pack.parallel, chemistry: chemistryOf(spec, profile), cellCapacityAh: spec.capacityAh }
	});
	if (!limits) return none();

	const restMinutes = REST_HOURS_AFTER_CHARGE * 60 - REST_SLACK_MINUTES;
	// Per session and group: its last ended charge step, then one index probe each
	// (readings_session_group_taken_idx) for the end-of-charge and the rest reading.
	const rows = (await tx.execute(sql`
		with s as (
			select c.id, c.ended_at from charge_sessions c
			where c.pack_id = ${pack.id} and c.status = 'done' and c.ended_at is not null and c.ended_at <= ${endedAt.toISOString()}::timestamptz
				and c.target = ${session.target}
				and (c.target <> 'volts' or round(c.target_volts::numeric, 3) = round(${session.targetVolts ?? 0}::numeric, 3))
			order by c.ended_at desc, c.id
			limit ${EARLIER_SESSIONS + 1}
		), last_step as (
			select distinct on (st.session_id, g.id) st.session_id, g.id as group_id, g.index, st.actual_start, st.actual_end
			from s
			join session_steps st on st.session_id = s.id
			join pack_groups g on g.pack_id = ${pack.id} and (st.group_id = g.id or st.group_id is null)
			where st.role in ('charge', 'top-up', 'balance') and st.actual_start is not null and st.actual_end is not null
			order by st.session_id, g.id, st.actual_end desc
		)
		select l.session_id, s.ended_at, l.group_id, l.index, e.id as end_id, e.volts as end_volts, r.volts as rest_volts
		from last_step l
		join s on s.id = l.session_id
		left join lateral (
			select x.id, x.volts from readings x
			where x.session_id = l.session_id and x.group_id = l.group_id and x.volts is not null
				and x.taken_at >= l.actual_start and x.taken_at <= l.actual_end
			order by x.taken_at desc, x.id desc limit 1
		) e on true
		left join lateral (
			select x.volts from readings x
			where x.session_id = l.session_id and x.group_id = l.group_id and x.volts is not null
				and x.taken_at >= l.actual_end + make_interval(mins => ${restMinutes})
			order by x.taken_at desc, x.id desc limit 1
		) r on true
		order by l.index`)) as unknown as SnapshotRow[];

	const snapshots = new Map<string, SessionSnapshot>();
	const rowIdOf = new Map<string, string>();
	const endReadingOf = new Map<string, number>();
	for (const r of rows) {
		const key = String(r.index);
		let snap = snapshots.get(r.session_id);
		if (!snap) {
			snap = { sessionId: r.session_id, endedAt: new Date(r.ended_at), target, endVolts: {}, restVolts: {} };
			snapshots.set(r.session_id, snap);
		}
		if (r.end_volts !== null) snap.endVolts[key] = Number(r.end_volts);
		if (r.rest_volts !== null) snap.restVolts![key] = Number(r.rest_volts);
		if (r.session_id === session.id) {
			rowIdOf.set(key, r.group_id);
			if (r.end_id !== null) endReadingOf.set(key, Number(r.end_id));
		}
	}
	const current = snapshots.get(session.id);
	if (!current) return none();
	snapshots.delete(session.id);
	const compared = compareSessions({ current, earlier: [...snapshots.values()], driftLimitVolts: limits.driftWarningVolts });
	if (!compared.ok) return none();

	const found: Found[] = compared.alerts.map((d) => ({
		...d,
		// Found is shaped on the engine's AlertDraft, whose kinds are a reading's; this one is the session's.
		kind: d.kind as unknown as Found['kind'],
		groupRowId: rowIdOf.get(d.groupId) ?? null,
		groupLabel: d.groupId,
		readingId: endReadingOf.get(d.groupId) ?? null,
		details: { ...d.details, target, limitVolts: limits.driftWarningVolts, group: Number(d.groupId) }
	}));
	return storeConditions(tx, { id: session.id, workshopId: session.workshopId, packId: session.packId, status: session.status, limits }, found, SESSION_DRIFT_KINDS, now);
}

/**
 * The comparison inside a savepoint of the transaction that marks the session done: whatever goes
 * wrong with it (it should not), the session is still done; the failure is logged and no drift
 * alert is raised for it.
 */
export async function compareEndedSessionSafely(tx: Tx, sessionId: string, now = new Date()): Promise<AlertChanges> {
	try {
		return await tx.transaction((savepoint) => compareEndedSession(savepoint, sessionId, now));
	} catch (e) {
		console.error(`The drift between sessions could not be compared for session ${sessionId}.`, e);
		return { raised: [], cleared: 0, deliveries: [] };
	}
}
