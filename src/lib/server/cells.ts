/**
 * A pack's batch of cells: arrival measurements (typed or from CSV), corrections, and the verdicts
 * of the engine's inspection — computed whenever the batch is read, so they are never stale.
 */
import { error } from '@sveltejs/kit';
import { and, eq, ne, sql } from 'drizzle-orm';
import { inspectBatch as inspectArrivals, type CellVerdict, type InspectionLimits } from '$lib/engine';
import { cellReasons } from '$lib/cell-words';
import { parseCellCsv, type CellRow, type RowError } from '$lib/cells-csv';
import { sortByLabel } from '$lib/natural-sort';
import { cellLabelKey } from '$lib/schemas/cells';
import { requirePermission, type Member } from './auth/permissions';
import type { CellSpecWithChemistry } from './cell-specs';
import { getCellSpec } from './cell-specs';
import { db, type Tx } from './db';
import { isUniqueViolation } from './db/errors';
import { cells, packGroups, type Cell, type Pack } from './db/schema';
import { newId } from './ids';
import { lockPack, requirePack } from './packs';

export type InspectedCell = Cell & {
	groupIndex: number | null;
	verdict: CellVerdict['verdict'];
	flags: CellVerdict['flags'];
	/** Why the cell is suspect or rejected, one plain sentence per flag (cell-words.ts). */
	reasons: string[];
};

export type Batch = { pack: Pack; spec: CellSpecWithChemistry; cells: InspectedCell[]; limits: InspectionLimits };

function inspectWithLimits(spec: CellSpecWithChemistry, rows: (Cell & { groupIndex: number | null })[]) {
	const inspection = inspectArrivals(
		spec.chemistry,
		rows.map((c) => ({
			id: c.id,
			volts: c.arrivalVolts,
			resistanceMilliOhms: c.resistanceMilliOhms ?? undefined,
			capacityAh: c.capacityAh ?? undefined
		}))
	);
	if ('ok' in inspection) throw new Error(`inspection failed: ${inspection.reason}`);
	const byId = new Map(inspection.verdicts.map((v) => [v.id, v]));
	const inspected = rows.map((c): InspectedCell => {
		const { verdict, flags } = byId.get(c.id)!;
		return { ...c, verdict, flags, reasons: cellReasons(flags, c, inspection.limits) };
	});
	return { cells: inspected, limits: inspection.limits };
}

/** Runs the engine's inspection over the whole batch (order kept). */
export function inspectBatch(spec: CellSpecWithChemistry, rows: (Cell & { groupIndex: number | null })[]): InspectedCell[] {
	return inspectWithLimits(spec, rows).cells;
}

/** The pack (when the member may see it), its spec, and its cells with group and verdict, by label in natural order. */
export async function listBatch(member: Member, packId: string): Promise<Batch> {
	const pack = await requirePack(member, packId);
	const [spec, rows] = await Promise.all([
		getCellSpec(member, pack.cellSpecId),
		db
			.select({ cell: cells, groupIndex: packGroups.index })
			.from(cells)
			.leftJoin(packGroups, eq(packGroups.id, cells.groupId))
			.where(eq(cells.packId, packId))
	]);
	// Sorted here, not by the database: its text order puts C10 before C2.
	const inspected = inspectWithLimits(spec, sortByLabel(rows.map((r) => ({ ...r.cell, groupIndex: r.groupIndex }))));
	return { pack, spec, ...inspected };
}

export type AddCellsResult =
	| { ok: true; imported: number }
	| { ok: false; reason?: 'duplicate-label'; errors: RowError[]; message: string };

/** The refusal for labels already in the batch (a conflict with what is stored: HTTP 409). */
function duplicateLabels(rows: CellRow[], taken: Set<string>, rowOf: (i: number) => number): AddCellsResult | null {
	const errors: RowError[] = rows.flatMap((r, i) =>
		taken.has(cellLabelKey(r.label))
			? [{ row: rowOf(i), field: 'label', message: `row ${rowOf(i)}: a cell labelled “${r.label}” is already in this batch` }]
			: []
	);
	if (!errors.length) return null;
	const named = errors.slice(0, 3).map((e) => `“${rows.find((r, i) => rowOf(i) === e.row)!.label}”`);
	return {
		ok: false,
		reason: 'duplicate-label',
		errors,
		message: `Nothing was imported: ${named.join(', ')}${errors.length > 3 ? ` and ${errors.length - 3} more` : ''} ${errors.length === 1 ? 'is' : 'are'} already in the batch (labels count as the same regardless of case).`
	};
}

/**
 * Adds measured cells to the batch, all or nothing. `rowOf` maps a cell's position to the row
 * number shown to the person (a CSV's line, or the entry row). A label already in the batch —
 * also one that a concurrent import stored a moment earlier (cells_pack_label_lower_key) — is a
 * `duplicate-label` refusal naming it.
 */
export async function addCells(
	member: Member,
	packId: string,
	rows: CellRow[],
	rowOf: (i: number) => number = (i) => i + 1
): Promise<AddCellsResult> {
	requirePermission(member, 'measurements.edit');
	await requirePack(member, packId);
	if (rows.length === 0) return { ok: false, errors: [], message: 'There are no cells to add.' };

	const storedLabels = async (client: Tx | typeof db) =>
		new Set(
			(await client.select({ label: cells.label }).from(cells).where(eq(cells.packId, packId))).map((r) =>
				cellLabelKey(r.label)
			)
		);
	try {
		return await db.transaction(async (tx) => {
			// A share lock on the pack: imports run side by side, but wait for an accepted matching
			// or a topology change (which lock it for update) and so never land in the middle of one.
			await lockPack(tx, member, packId, 'share');
			const refused = duplicateLabels(rows, await storedLabels(tx), rowOf);
			if (refused) return refused;
			// One statement over unnest()ed columns: atomic, five parameters however many rows
			// (PostgreSQL takes at most 65,535 per statement), and fast for 10,000 rows.
			// drizzle passes timestamps to postgres.js as text.
			const now = new Date().toISOString();
			const by = member.user.id;
			await tx.execute(sql`
				insert into cells (id, pack_id, label, arrival_volts, resistance_milliohms, capacity_ah,
					created_by, updated_by, created_at, updated_at)
				select t.id, ${packId}, t.label, t.volts, t.r, t.c, ${by}, ${by}, ${now}::timestamptz, ${now}::timestamptz
				from unnest(
					${sql.param(rows.map(() => newId()))}::text[],
					${sql.param(rows.map((r) => r.label))}::text[],
					${sql.param(rows.map((r) => r.volts))}::float8[],
					${sql.param(rows.map((r) => r.resistanceMilliOhms))}::float8[],
					${sql.param(rows.map((r) => r.capacityAh))}::float8[]
				) as t(id, label, volts, r, c)`);
			return { ok: true as const, imported: rows.length };
		});
	} catch (e) {
		// A concurrent import committed one of these labels after our check.
		if (isUniqueViolation(e, 'cells_pack_label_lower_key')) {
			const refused = duplicateLabels(rows, await storedLabels(db), rowOf);
			if (refused) return refused;
		}
		throw e;
	}
}

/** Imports a CSV of arrival measurements: every row valid, or nothing written. */
export async function importCellCsv(member: Member, packId: string, csv: string): Promise<AddCellsResult> {
	requirePermission(member, 'measurements.edit');
	const parsed = parseCellCsv(csv);
	if (!parsed.ok) {
		const n = parsed.errors.length;
		return {
			ok: false,
			errors: parsed.errors,
			message: `Nothing was imported: ${n} problem${n === 1 ? '' : 's'} in the file.`
		};
	}
	// Data rows start on line 2, under the header.
	return addCells(member, packId, parsed.rows, (i) => i + 2);
}

export type CellCorrection = Partial<Pick<CellRow, 'label' | 'volts' | 'resistanceMilliOhms' | 'capacityAh'>>;

export type CorrectionResult =
	| { ok: true; cell: InspectedCell; message: string }
	| { ok: false; field: 'label'; message: string };

/**
 * Edits one cell's measurements (technicians may; the topology stays as it is) and judges the
 * cell again against the whole batch, in one transaction that holds the pack row like every other
 * writer of the batch. Its stored place follows the new verdict: a cell that was set aside as
 * rejected and is no longer rejected (a typo fixed) goes back among the cells not placed; a loose
 * cell that is now rejected is set aside; a cell in a group stays there — it is in the pack — and
 * the pack and matching pages say that the group holds a rejected cell.
 */
export async function correctCell(
	member: Member,
	packId: string,
	cellId: string,
	patch: CellCorrection
): Promise<CorrectionResult> {
	requirePermission(member, 'measurements.edit');
	const pack = await requirePack(member, packId);
	const spec = await getCellSpec(member, pack.cellSpecId);
	const set = {
		...(patch.label !== undefined ? { label: patch.label } : {}),
		...(patch.volts !== undefined ? { arrivalVolts: patch.volts } : {}),
		...(patch.resistanceMilliOhms !== undefined ? { resistanceMilliOhms: patch.resistanceMilliOhms } : {}),
		...(patch.capacityAh !== undefined ? { capacityAh: patch.capacityAh } : {}),
		updatedBy: member.user.id,
		updatedAt: new Date()
	};
	try {
		return await db.transaction(async (tx) => {
			await lockPack(tx, member, packId);
			const [updated] = await tx
				.update(cells)
				.set(set)
				.where(and(eq(cells.id, cellId), eq(cells.packId, packId)))
				.returning({ id: cells.id });
			if (!updated) error(404, 'Not found');
			const rows = await tx
				.select({ cell: cells, groupIndex: packGroups.index })
				.from(cells)
				.leftJoin(packGroups, eq(packGroups.id, cells.groupId))
				.where(eq(cells.packId, packId));
			const judged = inspectBatch(spec, rows.map((r) => ({ ...r.cell, groupIndex: r.groupIndex })));
			const cell = judged.find((c) => c.id === cellId)!;
			const isRejected = cell.verdict === 'reject';
			const placement =
				isRejected && (cell.placement === 'unsorted' || cell.placement === 'spare')
					? 'rejected'
					: !isRejected && cell.placement === 'rejected'
						? 'unsorted'
						: cell.placement;
			if (placement !== cell.placement) {
				await tx.update(cells).set({ placement }).where(and(eq(cells.id, cellId), eq(cells.packId, packId)));
			}
			const message = !isRejected
				? cell.placement === 'rejected'
					? `${cell.label} saved. It is no longer rejected and is back among the cells not placed.`
					: `${cell.label} saved.`
				: placement === 'group'
					? `${cell.label} saved. It is now rejected and sits in G${cell.groupIndex}: ${cell.reasons.join('; ')}. Take it out of the pack and match again.`
					: `${cell.label} saved. It is rejected: ${cell.reasons.join('; ')}.`;
			return { ok: true as const, cell: { ...cell, placement }, message };
		});
	} catch (e) {
		if (isUniqueViolation(e)) {
			return { ok: false, field: 'label', message: `Another cell in this batch is labelled “${patch.label}”.` };
		}
		throw e;
	}
}

/** Removes a cell entered by mistake; a cell placed in a group stays until the matching changes. */
export async function removeCell(
	member: Member,
	packId: string,
	cellId: string
): Promise<{ ok: true } | { ok: false; reason: 'in-group'; message: string }> {
	requirePermission(member, 'measurements.edit');
	await requirePack(member, packId);
	const removed = await db
		.delete(cells)
		.where(and(eq(cells.id, cellId), eq(cells.packId, packId), ne(cells.placement, 'group')))
		.returning({ id: cells.id });
	if (removed.length) return { ok: true };
	const [still] = await db.select({ label: cells.label }).from(cells).where(and(eq(cells.id, cellId), eq(cells.packId, packId)));
	if (!still) error(404, 'Not found');
	return { ok: false, reason: 'in-group', message: `${still.label} is in a group. Match the pack again without it first.` };
}
