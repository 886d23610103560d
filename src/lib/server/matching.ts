/**
 * Matching a pack's batch into S groups of P cells: the engine proposes, the builder may swap
 * cells by hand, and accepting writes every cell's place in one transaction.
 */
import { and, eq, inArray, ne, sql } from 'drizzle-orm';
import { matchCells, type Match } from '$lib/engine';
import { requirePermission, type Member } from './auth/permissions';
import { listBatch, type InspectedCell } from './cells';
import { db } from './db';
import { cells } from './db/schema';
import { listGroups } from './packs';

/** A cell's capacity for matching: measured, else the spec's nominal capacity. */
export function matchingCapacity(cell: Pick<InspectedCell, 'capacityAh'>, nominalAh: number): number {
	return cell.capacityAh ?? nominalAh;
}

export type Proposal =
	| ({ ok: true; eligible: number; excludedSuspect: number; excludedRejected: number } & Omit<Match, never>)
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
		excludedRejected: rejected.length
	};
}

export type AcceptResult =
	| { ok: true; placed: number; spares: number }
	| { ok: false; reason: 'would-replace' | 'wrong-shape' | 'unknown-cell' | 'duplicate-cell' | 'rejected-cell'; message: string };

/**
 * Saves an assignment: groups[i] holds the cell ids of group i + 1. Every other usable cell of the
 * batch becomes a spare. An assignment already saved is replaced only with `replace`.
 */
export async function acceptMatching(
	member: Member,
	packId: string,
	input: { groups: string[][]; replace: boolean }
): Promise<AcceptResult> {
	requirePermission(member, 'packs.edit');
	const { pack, cells: batch } = await listBatch(member, packId);
	const { groups } = input;
	if (groups.length !== pack.series || groups.some((g) => g.length !== pack.parallel)) {
		return {
			ok: false,
			reason: 'wrong-shape',
			message: `This pack needs ${pack.series} groups of ${pack.parallel} cells.`
		};
	}
	const ids = groups.flat();
	if (new Set(ids).size !== ids.length) {
		return { ok: false, reason: 'duplicate-cell', message: 'A cell appears in two places.' };
	}
	const byId = new Map(batch.map((c) => [c.id, c]));
	const unknown = ids.find((id) => !byId.has(id));
	if (unknown) return { ok: false, reason: 'unknown-cell', message: 'A cell in the assignment is not in this batch.' };
	const bad = ids.map((id) => byId.get(id)!).find((c) => c.verdict === 'reject' || c.placement === 'rejected');
	if (bad) {
		return { ok: false, reason: 'rejected-cell', message: `Cell ${bad.label} is rejected and cannot go into a group.` };
	}
	const alreadySaved = batch.some((c) => c.placement === 'group');
	if (alreadySaved && !input.replace) {
		return {
			ok: false,
			reason: 'would-replace',
			message: 'This pack already has a saved assignment. Confirm to replace it.'
		};
	}

	const groupRows = await listGroups(packId);
	const now = new Date();
	await db.transaction(async (tx) => {
		// Everything not rejected starts as a spare, then each group's cells are placed.
		await tx
			.update(cells)
			.set({ placement: 'spare', groupId: null, updatedBy: member.user.id, updatedAt: now })
			.where(and(eq(cells.packId, packId), ne(cells.placement, 'rejected')));
		// Cells the inspection rejects are set aside, never left as spares.
		const rejectedIds = batch.filter((c) => c.verdict === 'reject').map((c) => c.id);
		if (rejectedIds.length) {
			await tx
				.update(cells)
				.set({ placement: 'rejected', groupId: null, updatedBy: member.user.id, updatedAt: now })
				.where(and(eq(cells.packId, packId), inArray(cells.id, rejectedIds)));
		}
		const places = groups.flatMap((group, i) => group.map((cellId) => sql`(${cellId}, ${groupRows[i].id})`));
		// One statement for every placed cell, however large the pack.
		await tx.execute(sql`
			update ${cells} set placement = 'group', group_id = v.group_id
			from (values ${sql.join(places, sql`, `)}) as v(cell_id, group_id)
			where ${cells.id} = v.cell_id and ${cells.packId} = ${packId}`);
	});
	const spares = batch.filter((c) => c.placement !== 'rejected' && c.verdict !== 'reject').length - ids.length;
	return { ok: true, placed: ids.length, spares };
}

/** The saved assignment: cell ids per group (group 1 first), or null when none is saved. */
export function savedAssignment(batch: InspectedCell[], series: number): string[][] | null {
	const placed = batch.filter((c) => c.placement === 'group' && c.groupIndex !== null);
	if (!placed.length) return null;
	const groups: string[][] = Array.from({ length: series }, () => []);
	for (const c of placed) groups[c.groupIndex! - 1]?.push(c.id);
	return groups;
}
