/**
 * What a plan is made from: the pack as the planner sees it (groups, chemistry, spec), the
 * workshop's chargers, each group's start state and who may be on watch. The plan screen loads
 * it; createSession and updateSession read it again inside their transaction, under the pack lock.
 */
import { error } from '@sveltejs/kit';
import { and, asc, eq, inArray, sql } from 'drizzle-orm';
import { chemistries, isChemistryId, type Chemistry } from '$lib/engine';
import type { Role } from '$lib/permissions';
import type { PlanCharger, PlanPack } from '$lib/session-plan';
import { requirePermission, type Member } from '../auth/permissions';
import { toEngineChemistry } from '../chemistry-profiles';
import { db, type Db, type Tx } from '../db';
import {
	cellSpecs,
	chargerChannels,
	chargers,
	chemistryProfiles,
	memberships,
	packGroups,
	packs,
	users,
	type CellSpec,
	type ChemistryProfile,
	type Pack
} from '../db/schema';
import { canSeePack } from '../packs';
import { invalid, type SessionFailure } from './results';

export type StartVoltsSource = 'last-reading' | 'cells' | 'none';

/** A member who may be named on watch (owner, builder or technician). */
export type WatchChoice = { id: string; name: string; role: Role };

export type PlanContext = {
	packId: string;
	packName: string;
	pack: PlanPack;
	chargers: PlanCharger[];
	/** Group id → rest volts per cell to start from (groups without any source are left out). */
	startVolts: Record<string, number>;
	startVoltsSource: Record<string, StartVoltsSource>;
	/** When the reading behind each 'last-reading' start was taken. */
	startVoltsTakenAt: Record<string, Date>;
	timeZone: string;
	/** Members who may be on watch, by name. */
	members: WatchChoice[];
};

/** Roles that may run a session, so may be on watch (permissions.ts: sessions.run). */
export const watchRoles: readonly Role[] = ['owner', 'builder', 'technician'];

/** The engine's Chemistry of a spec: a built-in by id, or the workshop's own profile row. */
export function chemistryOf(spec: Pick<CellSpec, 'chemistryId'>, profile: ChemistryProfile | null): Chemistry {
	if (spec.chemistryId && isChemistryId(spec.chemistryId)) return chemistries[spec.chemistryId];
	if (profile) return toEngineChemistry(profile);
	throw new Error('A cell spec without a usable chemistry');
}

/**
 * Each group's start state, newest first: the latest reading of the group in any session of the
 * pack, or the latest whole-pack reading ÷ series when that is newer; without readings, the mean
 * arrival volts of the cells placed in the group. One query, index scans per group and session.
 */
async function startStates(q: Tx | Db, pack: Pack) {
	const rows = await q.execute<{ group_id: string; group_volts: number | null; group_at: string | null; cells_volts: number | null }>(sql`
		select g.id as group_id, lr.volts as group_volts, lr.taken_at as group_at,
			(select avg(c.arrival_volts) from cells c where c.group_id = g.id and c.placement = 'group') as cells_volts
		from pack_groups g
		left join lateral (
			select r.volts, r.taken_at
			from charge_sessions s
			join lateral (
				select r.volts, r.taken_at from readings r
				where r.session_id = s.id and r.group_id = g.id and r.volts is not null
				order by r.taken_at desc limit 1
			) r on true
			where s.pack_id = g.pack_id
			order by r.taken_at desc limit 1
		) lr on true
		where g.pack_id = ${pack.id}`);
	const [whole] = await q.execute<{ volts: number; taken_at: string }>(sql`
		select r.volts, r.taken_at
		from charge_sessions s
		join lateral (
			select r.volts, r.taken_at from readings r
			where r.session_id = s.id and r.group_id is null and r.volts is not null
			order by r.taken_at desc limit 1
		) r on true
		where s.pack_id = ${pack.id}
		order by r.taken_at desc limit 1`);
	const startVolts: Record<string, number> = {};
	const source: Record<string, StartVoltsSource> = {};
	const takenAt: Record<string, Date> = {};
	const wholeAt = whole ? new Date(whole.taken_at) : null;
	for (const row of rows) {
		const groupAt = row.group_at ? new Date(row.group_at) : null;
		if (wholeAt && whole && (!groupAt || wholeAt > groupAt)) {
			startVolts[row.group_id] = Math.round((Number(whole.volts) / pack.series) * 1000) / 1000;
			source[row.group_id] = 'last-reading';
			takenAt[row.group_id] = wholeAt;
		} else if (groupAt && row.group_volts !== null) {
			startVolts[row.group_id] = Number(row.group_volts);
			source[row.group_id] = 'last-reading';
			takenAt[row.group_id] = groupAt;
		} else if (row.cells_volts !== null) {
			startVolts[row.group_id] = Math.round(Number(row.cells_volts) * 1000) / 1000;
			source[row.group_id] = 'cells';
		} else {
			source[row.group_id] = 'none';
		}
	}
	return { startVolts, source, takenAt };
}

/** Reads the plan context of a pack already loaded (and checked) — inside a transaction or not. */
export async function readPlanContext(q: Tx | Db, member: Member, pack: Pack): Promise<PlanContext> {
	const [specRows, groups, chargerRows, people, states] = await Promise.all([
		q
			.select({ spec: cellSpecs, profile: chemistryProfiles })
			.from(cellSpecs)
			.leftJoin(chemistryProfiles, eq(chemistryProfiles.id, cellSpecs.chemistryProfileId))
			.where(and(eq(cellSpecs.id, pack.cellSpecId), eq(cellSpecs.workshopId, member.workshop.id))),
		q.select({ id: packGroups.id, index: packGroups.index }).from(packGroups).where(eq(packGroups.packId, pack.id)).orderBy(asc(packGroups.index)),
		q
			.select({ charger: chargers, channel: chargerChannels })
			.from(chargers)
			.leftJoin(chargerChannels, eq(chargerChannels.chargerId, chargers.id))
			.where(eq(chargers.workshopId, member.workshop.id))
			.orderBy(asc(chargers.name), asc(chargers.id), asc(chargerChannels.position)),
		q
			.select({ id: users.id, name: users.name, role: memberships.role })
			.from(memberships)
			.innerJoin(users, eq(users.id, memberships.userId))
			.where(and(eq(memberships.workshopId, member.workshop.id), inArray(memberships.role, [...watchRoles])))
			.orderBy(asc(users.name)),
		startStates(q, pack)
	]);
	const [{ spec, profile }] = specRows;
	const planChargers = new Map<string, PlanCharger>();
	for (const { charger, channel } of chargerRows) {
		let entry = planChargers.get(charger.id);
		if (!entry) {
			entry = { id: charger.id, name: charger.name, kind: charger.kind, channels: [] };
			planChargers.set(charger.id, entry);
		}
		if (channel) {
			entry.channels.push({
				id: channel.id,
				name: channel.name,
				position: channel.position,
				maxVolts: channel.maxVolts,
				maxAmps: channel.maxAmps,
				maxWatts: channel.maxWatts,
				balanceAmps: channel.balanceAmps,
				maxSeriesCells: channel.maxSeriesCells
			});
		}
	}
	return {
		packId: pack.id,
		packName: pack.name,
		pack: {
			series: pack.series,
			parallel: pack.parallel,
			chemistry: chemistryOf(spec, profile),
			cellCapacityAh: spec.capacityAh,
			cellMaxChargeAmps: spec.maxChargeAmps,
			cellResistanceMilliOhms: spec.resistanceMilliOhms,
			bmsFitted: pack.bmsFitted,
			bmsBalanceAmps: pack.bmsBalanceAmps,
			groups
		},
		chargers: [...planChargers.values()],
		startVolts: states.startVolts,
		startVoltsSource: states.source,
		startVoltsTakenAt: states.takenAt,
		timeZone: member.workshop.timeZone,
		members: people
	};
}

/**
 * The plan screen's starting point for a pack (plans.edit): 404 for a pack of another workshop or
 * one the member may not see.
 */
export async function loadPlanContext(member: Member, packId: string): Promise<PlanContext> {
	requirePermission(member, 'plans.edit');
	const [pack] = await db
		.select()
		.from(packs)
		.where(and(eq(packs.id, packId), eq(packs.workshopId, member.workshop.id)));
	if (!pack || !canSeePack(member, pack)) error(404, 'Not found');
	return readPlanContext(db, member, pack);
}

/** The member's name when the user may be on watch; else why not, as a failure on `field`. */
export async function watcherProblem(q: Tx | Db, workshopId: string, userId: string | null, field: string): Promise<SessionFailure | null> {
	if (userId === null) return null;
	const [row] = await q
		.select({ role: memberships.role, name: users.name })
		.from(memberships)
		.innerJoin(users, eq(users.id, memberships.userId))
		.where(and(eq(memberships.workshopId, workshopId), eq(memberships.userId, userId)));
	if (!row) return invalid('Choose a member of this workshop to be on watch.', field, 'not-a-member');
	if (!watchRoles.includes(row.role)) {
		return invalid(`${row.name} is a viewer and cannot run sessions: choose an owner, builder or technician to be on watch.`, field, 'cannot-run');
	}
	return null;
}
