/**
 * Matching a pack's batch into S groups of P cells: the engine proposes, the builder may swap
 * cells by hand, and accepting writes every cell's place in one transaction.
 */
import { createHash } from 'node:crypto';
import { and, asc, eq, ne, sql } from 'drizzle-orm';
import { matchCells, type Match } from '$lib/engine';
import { requirePermission, type Member } from './auth/permissions';
import { getCellSpec } from './cell-specs';
import { inspectBatch, listBatch, type InspectedCell } from './cells';
import { db } from './db';
import { cells, packGroups, packs, type Cell, type Pack } from './db/schema';
import { requirePack } from './packs';

/** A cell's capacity for matching: measured, else the spec's nominal capacity. */
export function matchingCapacity(cell: Pick<InspectedCell, 'capacityAh'>, nominalAh: number): number {
	return cell.capacityAh ?? nominalAh;
}

export type Proposal =
	| ({ ok: true; eligible: number; excludedSuspect: number; excludedRejected: number; version: string } & Omit<Match, never>)
	| { ok: false; reason: 'not-enough-cells'; needed: number; usable: number; missing: number; message: string };

/** The engine's proposal over the usable cells (suspect ones only when asked). */
export async function proposeMatching(
	member: Member,
	packId: string,
	options: { includeSuspect: boolean }
): Promise<Proposal> {
	requirePermission(member, 'packs.edit');
	const { pack, spec, cells: batch } = await listBatch(member, packId);
	const rejected = batch.filter((c) => c.verdict === 'reject' || c.placement === 'rejected');
	const suspect = batch.filter((c) => c.verdict === 'suspect' && c.placement !== 'rejected');
	const usable = batch.filter(
		(c) => c.verdict !== 'reject' && c.placement !== 'rejected' && (options.includeSuspect || c.verdict !== 'suspect')
	);
	const needed = pack.series * pack.parallel;
	if (usable.length < needed) {
		const missing = needed - usable.length;
		const hint =
			!options.includeSuspect && suspect.length
				? ` Including the ${suspect.length} suspect cell${suspect.length === 1 ? '' : 's'} would ${suspect.length >= missing ? 'be enough' : 'still not be enough'}.`
				: '';
		return {
			ok: false,
			reason: 'not-enough-cells',
			needed,
			usable: usable.length,
			missing,
			message: `${pack.series}S${pack.parallel}P needs ${needed} cells; ${usable.length} usable — ${missing} missing.${hint}`
		};
	}
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
	return {
		...match,
		eligible: usable.length,
		excludedSuspect: options.includeSuspect ? 0 : suspect.length,
		excludedRejected: rejected.length,
		version: batchVersion(pack, batch)
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
		const [pack] = await tx
			.select()
			.from(packs)
			.where(and(eq(packs.id, packId), eq(packs.workshopId, member.workshop.id)))
			.for('update');
		const refuse = (reason: Extract<AcceptResult, { ok: false }>['reason'], message: string) =>
			({ ok: false, reason, message }) as const;
		if (!pack || pack.cellSpecId !== spec.id) return refuse('pack-changed', PACK_CHANGED_MESSAGE);
		const rows = await tx
			.select({ cell: cells, groupIndex: packGroups.index })
			.from(cells)
			.leftJoin(packGroups, eq(packGroups.id, cells.groupId))
			.where(eq(cells.packId, packId));
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
			await tx.execute(sql`
				update ${cells} set placement = v.placement::cell_placement, group_id = v.group_id,
					updated_by = ${member.user.id}, updated_at = ${new Date().toISOString()}::timestamptz
				from unnest(
					${sql.param(changes.map((c) => c.id))}::text[],
					${sql.param(changes.map((c) => c.placement))}::text[],
					${sql.param(changes.map((c) => c.groupId))}::text[]
				) as v(cell_id, placement, group_id)
				where ${cells.id} = v.cell_id and ${cells.packId} = ${packId}`);
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
