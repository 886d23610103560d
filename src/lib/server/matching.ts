/**
 * Matching a pack's batch into S groups of P cells: the engine proposes, the builder may swap
 * cells by hand, and accepting writes every cell's place in one transaction.
 */
import { createHash } from 'node:crypto';
import { asc, eq, sql } from 'drizzle-orm';
import { matchCells, pickLeastRiskySuspects, type Match } from '$lib/engine';
import { requirePermission, type Member } from './auth/permissions';
import { getCellSpec } from './cell-specs';
import { inspectBatch, listBatch, type InspectedCell } from './cells';
import { db } from './db';
import { cells, packGroups, type Cell, type Pack } from './db/schema';
import { lockPack, requirePack } from './packs';

/** A cell's capacity for matching: measured, else the spec's nominal capacity. */
export function matchingCapacity(cell: Pick<InspectedCell, 'capacityAh'>, nominalAh: number): number {
	return cell.capacityAh ?? nominalAh;
}

/** A suspect cell a proposal put into a group, and why it is suspect. */
export type SuspectUse = { id: string; label: string; reasons: string[] };

export type Proposal =
	| ({
			ok: true;
			eligible: number;
			excludedSuspect: number;
			excludedRejected: number;
			version: string;
			/** The suspect cells placed, least risky first: only as many as the good cells were short. */
			suspectsUsed: SuspectUse[];
			/** Suspect cells left out; they are among the spares. */
			suspectsLeft: number;
			/** In words: which suspect cells were used and why, or null when none were. */
			suspectNote: string | null;
	  } & Omit<Match, never>)
	| { ok: false; reason: 'not-enough-cells'; needed: number; usable: number; missing: number; message: string };

const cellsWord = (n: number) => `${n} cell${n === 1 ? '' : 's'}`;

/**
 * The engine's proposal over the good cells. With `includeSuspect`, a pack short of good cells
 * takes only as many suspect cells as it is short, the least risky first (capacity shortfall,
 * then high resistance, then low voltage — pickLeastRiskySuspects); the rest stay spares.
 * Rejected cells never take part.
 */
export async function proposeMatching(
	member: Member,
	packId: string,
	options: { includeSuspect: boolean }
): Promise<Proposal> {
	requirePermission(member, 'packs.edit');
	const { pack, spec, cells: batch, limits } = await listBatch(member, packId);
	const isSetAside = (c: InspectedCell) => c.verdict === 'reject' || c.placement === 'rejected';
	const rejected = batch.filter(isSetAside);
	const good = batch.filter((c) => c.verdict === 'ok' && !isSetAside(c));
	const suspect = batch.filter((c) => c.verdict === 'suspect' && !isSetAside(c));
	const needed = pack.series * pack.parallel;
	const short = Math.max(0, needed - good.length);
	const available = good.length + (options.includeSuspect ? suspect.length : 0);
	if (available < needed) {
		const missing = needed - available;
		const hint =
			!options.includeSuspect && suspect.length
				? ` Including suspect cells would ${suspect.length >= missing ? `use ${cellsWord(missing)} of the ${suspect.length} suspect, the least risky first` : `still leave ${cellsWord(missing - suspect.length)} missing`}.`
				: '';
		return {
			ok: false,
			reason: 'not-enough-cells',
			needed,
			usable: available,
			missing,
			message: `${pack.series}S${pack.parallel}P needs ${needed} cells; ${available} usable — ${missing} missing.${hint}`
		};
	}
	const choice = pickLeastRiskySuspects(
		suspect.map((c) => ({
			id: c.id,
			volts: c.arrivalVolts,
			resistanceMilliOhms: c.resistanceMilliOhms ?? undefined,
			capacityAh: c.capacityAh ?? undefined
		})),
		{ limits, verdicts: suspect.map((c) => ({ id: c.id, verdict: c.verdict, flags: c.flags })) },
		options.includeSuspect ? short : 0
	);
	const byId = new Map(suspect.map((c) => [c.id, c]));
	const used = choice.used.map((id) => byId.get(id)!);
	const usable = [...good, ...used];
	const match = matchCells({
		cells: usable.map((c) => ({
			id: c.id,
			capacityAh: matchingCapacity(c, spec.capacityAh),
			resistanceMilliOhms: c.resistanceMilliOhms ?? undefined
		})),
		series: pack.series,
		parallel: pack.parallel
	});
	if (!match.ok) throw new Error(`matching failed: ${match.reason}`);
	const suspectsUsed = used.map((c) => ({ id: c.id, label: c.label, reasons: c.reasons }));
	const suspectNote = used.length
		? `The good cells were ${cellsWord(short)} short, so the least risky suspect ${used.length === 1 ? 'cell went' : 'cells went'} in: ` +
			used.map((c) => `${c.label} (${c.reasons.join('; ')})`).join(', ') +
			(choice.left.length === 1
				? '. The other suspect cell stays a spare.'
				: choice.left.length
					? `. The other ${choice.left.length} suspect cells stay spares.`
					: '.')
		: null;
	return {
		...match,
		// Suspect cells left out are spares too, as accepting makes them.
		spares: [...match.spares, ...choice.left],
		eligible: usable.length,
		excludedSuspect: choice.left.length,
		excludedRejected: rejected.length,
		version: batchVersion(pack, batch),
		suspectsUsed,
		suspectsLeft: choice.left.length,
		suspectNote
	};
}

/**
 * What an assignment was made from: the pack's topology and spec and every cell's stored
 * measurements and place. A proposal (and the matching page) carries it; accepting sends it back,
 * and a batch that changed meanwhile is refused rather than half-matched. Labels are left out: a
 * renamed cell is the same cell.
 */
export function batchVersion(
	pack: Pick<Pack, 'series' | 'parallel' | 'cellSpecId'>,
	batch: Pick<Cell, 'id' | 'arrivalVolts' | 'resistanceMilliOhms' | 'capacityAh' | 'placement' | 'groupId'>[]
): string {
	const hash = createHash('sha256');
	hash.update(`${pack.series}|${pack.parallel}|${pack.cellSpecId}\n`);
	for (const c of [...batch].sort((a, b) => (a.id < b.id ? -1 : a.id > b.id ? 1 : 0))) {
		hash.update(`${c.id}|${c.arrivalVolts}|${c.resistanceMilliOhms}|${c.capacityAh}|${c.placement}|${c.groupId}\n`);
	}
	return hash.digest('base64url').slice(0, 32);
}

export const PACK_CHANGED_MESSAGE = 'The pack changed while you were matching — propose again.';

export type AcceptResult =
	| { ok: true; placed: number; spares: number }
	| {
			ok: false;
			reason: 'would-replace' | 'pack-changed' | 'wrong-shape' | 'unknown-cell' | 'duplicate-cell' | 'rejected-cell';
			message: string;
	  };

/** HTTP status of a refused accept: a conflict with the stored batch is 409, a bad assignment 400. */
export function acceptStatus(reason: Extract<AcceptResult, { ok: false }>['reason']): 400 | 409 {
	return reason === 'would-replace' || reason === 'pack-changed' ? 409 : 400;
}

/**
 * Saves an assignment: groups[i] holds the cell ids of group i + 1. Every other usable cell of the
 * batch becomes a spare. An assignment already saved is replaced only with `replace`.
 *
 * One transaction that first locks the pack row, so a topology change (updatePack), a cell import
 * or another accept waits for it or it for them; the batch is read again under the lock. With
 * `version` (from the proposal or the page), any change since then is a `pack-changed` refusal.
 */
export async function acceptMatching(
	member: Member,
	packId: string,
	input: { groups: string[][]; replace: boolean; version?: string }
): Promise<AcceptResult> {
	requirePermission(member, 'packs.edit');
	const visible = await requirePack(member, packId);
	const spec = await getCellSpec(member, visible.cellSpecId);
	return db.transaction(async (tx) => {
		const pack = await lockPack(tx, member, packId);
		const refuse = (reason: Extract<AcceptResult, { ok: false }>['reason'], message: string) =>
			({ ok: false, reason, message }) as const;
		if (!pack || pack.cellSpecId !== spec.id) return refuse('pack-changed', PACK_CHANGED_MESSAGE);
		// The cells are locked too: a correction or a removal of one of them (which do not lock the
		// pack) waits for this accept, or this read waits for it and sees what it wrote.
		const rows = await tx
			.select({ cell: cells, groupIndex: packGroups.index })
			.from(cells)
			.leftJoin(packGroups, eq(packGroups.id, cells.groupId))
			.where(eq(cells.packId, packId))
			.for('update', { of: cells });
		const stored = rows.map((r) => ({ ...r.cell, groupIndex: r.groupIndex }));
		if (input.version !== undefined && input.version !== batchVersion(pack, stored)) {
			return refuse('pack-changed', PACK_CHANGED_MESSAGE);
		}
		const batch = inspectBatch(spec, stored);

		const { groups } = input;
		if (groups.length !== pack.series || groups.some((g) => g.length !== pack.parallel)) {
			return refuse('wrong-shape', `This pack needs ${pack.series} groups of ${pack.parallel} cells.`);
		}
		const ids = groups.flat();
		if (new Set(ids).size !== ids.length) return refuse('duplicate-cell', 'A cell appears in two places.');
		const byId = new Map(batch.map((c) => [c.id, c]));
		if (ids.some((id) => !byId.has(id))) {
			return refuse('unknown-cell', 'A cell in the assignment is not in this batch.');
		}
		const bad = ids.map((id) => byId.get(id)!).find((c) => c.verdict === 'reject' || c.placement === 'rejected');
		if (bad) return refuse('rejected-cell', `Cell ${bad.label} is rejected and cannot go into a group.`);
		if (batch.some((c) => c.placement === 'group') && !input.replace) {
			return refuse('would-replace', 'This pack already has a saved assignment. Confirm to replace it.');
		}

		const groupRows = await tx
			.select({ id: packGroups.id, index: packGroups.index })
			.from(packGroups)
			.where(eq(packGroups.packId, packId))
			.orderBy(asc(packGroups.index));
		if (groupRows.length !== pack.series) throw new Error(`pack ${packId} has ${groupRows.length} groups for ${pack.series}S`);

		// Every cell's new place: its group, else rejected (the inspection says so, or it was set
		// aside before), else spare. Only cells whose place changes are written, in one statement
		// over three arrays: three parameters however large the pack (a VALUES list of 40,000 cells
		// would pass PostgreSQL's limit of 65,535 parameters per statement), and one write per row
		// (a second update of a row written earlier in the same transaction re-runs all its
		// foreign-key checks).
		const groupOf = new Map(groups.flatMap((group, i) => group.map((cellId) => [cellId, groupRows[i].id] as const)));
		const changes = batch.flatMap((c) => {
			const groupId = groupOf.get(c.id) ?? null;
			const placement = groupId ? 'group' : c.placement === 'rejected' || c.verdict === 'reject' ? 'rejected' : 'spare';
			return placement === c.placement && groupId === c.groupId ? [] : [{ id: c.id, placement, groupId }];
		});
		if (changes.length) {
			const written = await tx.execute(sql`
				update ${cells} set placement = v.placement::cell_placement, group_id = v.group_id,
					updated_by = ${member.user.id}, updated_at = ${new Date().toISOString()}::timestamptz
				from unnest(
					${sql.param(changes.map((c) => c.id))}::text[],
					${sql.param(changes.map((c) => c.placement))}::text[],
					${sql.param(changes.map((c) => c.groupId))}::text[]
				) as v(cell_id, placement, group_id)
				where ${cells.id} = v.cell_id and ${cells.packId} = ${packId}`);
			// Every row is locked above, so this holds; if not, roll back rather than save half.
			if (written.count !== changes.length) throw new Error(`accept wrote ${written.count} of ${changes.length} cells`);
		}
		const spares = batch.filter((c) => c.placement !== 'rejected' && c.verdict !== 'reject').length - ids.length;
		return { ok: true as const, placed: ids.length, spares };
	});
}

/**
 * The saved assignment: cell ids per group (group 1 first), or null when none is saved. Only a
 * complete one (S groups of P) counts; anything else is not an assignment the pack can be built from.
 */
export function savedAssignment(batch: InspectedCell[], series: number, parallel?: number): string[][] | null {
	const placed = batch.filter((c) => c.placement === 'group' && c.groupIndex !== null);
	if (!placed.length) return null;
	const groups: string[][] = Array.from({ length: series }, () => []);
	for (const c of placed) groups[c.groupIndex! - 1]?.push(c.id);
	if (parallel !== undefined && groups.some((g) => g.length !== parallel)) return null;
	return groups;
}
