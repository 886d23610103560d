/**
 * Self-discharge checks of a pack: re-measured volts at rest (voltage_checks) against an earlier
 * measure, compared with the batch by the engine (checkSelfDischarge).
 *
 * What is measured: the loose cells of a batch not yet built (their arrival volts, at the time
 * they were entered, are the first measure), or — once cells sit in groups — the pack's groups
 * (a group's first measure is its first check: there is no arrival volts for a group). A group's
 * rest readings in charge sessions are not used: they are taken hours after a charge, while the
 * voltage still settles, and a check wants days at rest without a charge in between.
 *
 * Which two measures are compared: an item's newest measure, against its newest earlier measure
 * taken at least the minimum gap (3 days) before it — so a round entered too early does not spoil
 * the next one. An item with no such earlier measure is listed as "too soon", with the reason.
 */
import { error } from '@sveltejs/kit';
import { asc, eq, sql } from 'drizzle-orm';
import { checkSelfDischarge, SELF_DISCHARGE_DEFAULTS, type Failure, type SelfDischarge, type VoltageCheckItem } from '$lib/engine';
import { sortByLabel } from '$lib/natural-sort';
import { checkVolts } from '$lib/schemas/self-discharge';
import { requirePermission, type Member } from './auth/permissions';
import { db, type Tx } from './db';
import { cells, packGroups, voltageChecks, type Pack } from './db/schema';
import { newId } from './ids';
import { lockPack, requirePack } from './packs';

const MS_PER_DAY = 86_400_000;
/** A check may be entered a little ahead of the server's clock (a phone's clock runs fast). */
const FUTURE_SLACK_MS = 5 * 60_000;

export type CheckMode = 'cells' | 'groups';

export type Measure = { volts: number; at: Date };

/** A cell or group that can be re-measured, with its measures oldest first. */
export type CheckTarget = { id: string; kind: 'cell' | 'group'; label: string; measures: Measure[] };

export type TooSoon = { id: string; label: string; days: number };

export type SelfDischargeView = {
	pack: Pack;
	mode: CheckMode;
	/** In natural label order (cells) or group order. */
	targets: CheckTarget[];
	/** Items compared, and the engine's answer; null while nothing has been re-measured. */
	result: (SelfDischarge & { ok: true }) | Failure | null;
	tooSoon: TooSoon[];
	/** Targets with a single measure so far. */
	notMeasured: string[];
};

/** Cells mode until a cell sits in a group: then the groups are what can be measured. */
async function loadTargets(client: Tx | typeof db, packId: string): Promise<{ mode: CheckMode; targets: CheckTarget[] }> {
	const [cellRows, groupRows, checkRows] = await Promise.all([
		client
			.select({ id: cells.id, label: cells.label, volts: cells.arrivalVolts, at: cells.createdAt, placement: cells.placement })
			.from(cells)
			.where(eq(cells.packId, packId)),
		client.select({ id: packGroups.id, index: packGroups.index }).from(packGroups).where(eq(packGroups.packId, packId)).orderBy(asc(packGroups.index)),
		client
			.select({ cellId: voltageChecks.cellId, groupId: voltageChecks.groupId, volts: voltageChecks.volts, at: voltageChecks.measuredAt })
			.from(voltageChecks)
			.where(eq(voltageChecks.packId, packId))
			.orderBy(asc(voltageChecks.measuredAt))
	]);
	const checksOf = new Map<string, Measure[]>();
	for (const c of checkRows) {
		const key = (c.cellId ?? c.groupId)!;
		checksOf.set(key, [...(checksOf.get(key) ?? []), { volts: c.volts, at: c.at }]);
	}
	const built = cellRows.some((c) => c.placement === 'group');
	if (built) {
		return {
			mode: 'groups',
			targets: groupRows.map((g) => ({ id: g.id, kind: 'group', label: `G${g.index}`, measures: checksOf.get(g.id) ?? [] }))
		};
	}
	// Rejected cells are set aside already; the check is for the cells that may still be built in.
	const loose = sortByLabel(cellRows.filter((c) => c.placement !== 'rejected'));
	return {
		mode: 'cells',
		targets: loose.map((c) => ({
			id: c.id,
			kind: 'cell',
			label: c.label,
			measures: [{ volts: c.volts, at: c.at }, ...(checksOf.get(c.id) ?? [])].sort((a, b) => a.at.getTime() - b.at.getTime())
		}))
	};
}

/** The two measures to compare: the newest, and the newest one at least `minDays` before it. */
export function pairMeasures(target: CheckTarget, minDays: number): { item: VoltageCheckItem } | { tooSoon: TooSoon } | null {
	const { measures } = target;
	if (measures.length < 2) return null;
	const second = measures[measures.length - 1];
	const earlier = measures.slice(0, -1);
	const old = earlier.filter((m) => (second.at.getTime() - m.at.getTime()) / MS_PER_DAY >= minDays);
	if (!old.length) {
		const days = (second.at.getTime() - earlier[earlier.length - 1].at.getTime()) / MS_PER_DAY;
		return { tooSoon: { id: target.id, label: target.label, days } };
	}
	const first = old[old.length - 1];
	return {
		item: { id: target.id, label: target.label, firstVolts: first.volts, firstAt: first.at, secondVolts: second.volts, secondAt: second.at }
	};
}

/** The pack's checks and what they show (the pack when the member may see it; 404 otherwise). */
export async function getSelfDischarge(member: Member, packId: string): Promise<SelfDischargeView> {
	const pack = await requirePack(member, packId);
	const { mode, targets } = await loadTargets(db, packId);
	const items: VoltageCheckItem[] = [];
	const tooSoon: TooSoon[] = [];
	const notMeasured: string[] = [];
	for (const t of targets) {
		const pair = pairMeasures(t, SELF_DISCHARGE_DEFAULTS.minDays);
		if (!pair) notMeasured.push(t.label);
		else if ('item' in pair) items.push(pair.item);
		else tooSoon.push(pair.tooSoon);
	}
	const result = items.length || tooSoon.length ? checkSelfDischarge(items) : null;
	return { pack, mode, targets, result: result as SelfDischargeView['result'], tooSoon, notMeasured };
}

export type StoreChecksResult = { ok: true; stored: number } | { ok: false; status: 400 | 409; message: string };

/**
 * Stores one round of re-measured volts, all or nothing: every entry must name a cell or group
 * that can be checked now (read again inside the transaction, which holds the pack row like the
 * other writers of the batch), each at most once.
 */
export async function storeVoltageChecks(
	member: Member,
	packId: string,
	round: { measuredAt: Date; entries: { targetId: string; volts: number }[] },
	/** The server's clock (tests pass their own). */
	now: Date = new Date()
): Promise<StoreChecksResult> {
	requirePermission(member, 'measurements.edit');
	await requirePack(member, packId);
	if (round.entries.length === 0) return { ok: false, status: 400, message: 'Enter at least one voltage.' };
	if (round.measuredAt.getTime() > now.getTime() + FUTURE_SLACK_MS) {
		return { ok: false, status: 400, message: 'The time of the measure is in the future. Give the time the volts were read.' };
	}
	return db.transaction(async (tx) => {
		const pack = await lockPack(tx, member, packId, 'share');
		if (!pack) error(404, 'Not found');
		const { targets } = await loadTargets(tx, packId);
		const byId = new Map(targets.map((t) => [t.id, t]));
		const seen = new Set<string>();
		for (const e of round.entries) {
			const target = byId.get(e.targetId);
			if (!target) {
				return { ok: false as const, status: 409 as const, message: 'Nothing was saved: a cell or group on the form is no longer one to check in this pack (the pack changed meanwhile). Reload the page and enter the volts again.' };
			}
			if (seen.has(e.targetId)) return { ok: false as const, status: 400 as const, message: `Nothing was saved: ${target.label} is entered twice.` };
			seen.add(e.targetId);
			const firstAt = target.measures[0]?.at;
			if (target.kind === 'cell' && firstAt && round.measuredAt.getTime() <= firstAt.getTime()) {
				return { ok: false as const, status: 400 as const, message: `Nothing was saved: the time given is before ${target.label}'s arrival measure. Give the time the volts were read.` };
			}
		}
		const bad = round.entries.flatMap((e) => {
			const parsed = checkVolts.safeParse(e.volts);
			return parsed.success ? [] : [`${byId.get(e.targetId)!.label}: ${parsed.error.issues[0].message.toLowerCase().replace(/\.$/, '')}`];
		});
		if (bad.length) {
			const more = bad.length > 5 ? ` (and ${bad.length - 5} more)` : '';
			return { ok: false as const, status: 400 as const, message: `Nothing was saved: ${bad.slice(0, 5).join('; ')}${more}.` };
		}
		const kinds = round.entries.map((e) => byId.get(e.targetId)!.kind);
		const at = round.measuredAt.toISOString();
		// One statement over unnest()ed columns: all or nothing, a few parameters however many cells.
		await tx.execute(sql`
			insert into voltage_checks (id, workshop_id, pack_id, cell_id, group_id, volts, measured_at, entered_by)
			select t.id, ${member.workshop.id}, ${packId}, t.cell_id, t.group_id, t.volts, ${at}::timestamptz, ${member.user.id}
			from unnest(
				${sql.param(round.entries.map(() => newId()))}::text[],
				${sql.param(round.entries.map((e, i) => (kinds[i] === 'cell' ? e.targetId : null)))}::text[],
				${sql.param(round.entries.map((e, i) => (kinds[i] === 'group' ? e.targetId : null)))}::text[],
				${sql.param(round.entries.map((e) => e.volts))}::float8[]
			) as t(id, cell_id, group_id, volts)`);
		return { ok: true as const, stored: round.entries.length };
	});
}
