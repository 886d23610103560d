import { and, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { cells, packGroups } from '$lib/server/db/schema';
import { addCells, correctCell, importCellCsv, listBatch, removeCell } from '$lib/server/cells';
import { acceptMatching, proposeMatching } from '$lib/server/matching';
import { createPack, listPacks, requirePack, updatePack } from '$lib/server/packs';
import { joinAs, packFixture } from './helpers';

// Invented measurements (test data, not check values).
const commaCsv = 'label,volts,resistance_mohm,capacity_ah\nC1,3.612,18.5,4.012\nC2,3.598,19.25,3.987\nC3,3.605,,\n';
const semicolonDecimalComma = '\uFEFFlabel;volts;resistance_mohm;capacity_ah\r\nC1;3,612;18,5;4,012\r\nC2;3,598;19,25;3,987\r\nC3;3,605;;\r\n';

const measured = async (member: Parameters<typeof listBatch>[0], packId: string) =>
	(await listBatch(member, packId)).cells.map((c) => [c.label, c.arrivalVolts, c.resistanceMilliOhms, c.capacityAh]);

describe('cell CSV import', () => {
	it('imports nothing from a file with one bad row, and names that row', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 2 });
		const csv = 'label,volts,resistance_mohm,capacity_ah\nC1,3.61,18,4\nC2,3.60,18,4\nC3,abc,18,4\nC4,3.62,18,4\n';
		const result = await importCellCsv(owner, pack.id, csv);
		expect(result.ok).toBe(false);
		if (result.ok) return;
		// Header is row 1, so the third data line is row 4.
		expect(result.errors).toHaveLength(1);
		expect(result.errors[0].row).toBe(4);
		expect(result.errors[0].message).toMatch(/^row 4: voltage/);
		expect(await db.$count(cells, eq(cells.packId, pack.id))).toBe(0);
	});

	it('reads a semicolon, decimal-comma file with a byte-order mark as the same values as the comma file', async () => {
		const a = await packFixture({ series: 1, parallel: 3 });
		const b = await packFixture({ series: 1, parallel: 3 });
		expect(await importCellCsv(a.owner, a.pack.id, commaCsv)).toEqual({ ok: true, imported: 3 });
		expect(await importCellCsv(b.owner, b.pack.id, semicolonDecimalComma)).toEqual({ ok: true, imported: 3 });
		const expected = [
			['C1', 3.612, 18.5, 4.012],
			['C2', 3.598, 19.25, 3.987],
			['C3', 3.605, null, null]
		];
		expect(await measured(a.owner, a.pack.id)).toEqual(expected);
		expect(await measured(b.owner, b.pack.id)).toEqual(expected);
	});

	it('refuses labels already in the batch, importing nothing', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 3 });
		await importCellCsv(owner, pack.id, commaCsv);
		const again = await importCellCsv(owner, pack.id, 'label,volts\nC9,3.6\nc2,3.6\n');
		expect(again.ok).toBe(false);
		if (!again.ok) expect(again.errors.map((e) => e.row)).toEqual([3]);
		expect(await db.$count(cells, eq(cells.packId, pack.id))).toBe(3);
	});

	it('imports 10,000 generated rows, all present', async () => {
		const { owner, pack } = await packFixture({ series: 200, parallel: 20 });
		const lines = ['label,volts,resistance_mohm,capacity_ah'];
		for (let i = 1; i <= 10_000; i++) lines.push(`N${i},${(3.5 + (i % 100) / 1000).toFixed(3)},${15 + (i % 7)},${(4 + (i % 13) / 100).toFixed(2)}`);
		const started = performance.now();
		const result = await importCellCsv(owner, pack.id, lines.join('\n'));
		console.log(`10,000-row CSV import: ${Math.round(performance.now() - started)} ms`);
		expect(result).toEqual({ ok: true, imported: 10_000 });
		expect(await db.$count(cells, eq(cells.packId, pack.id))).toBe(10_000);
		// Spot checks: what is stored equals what the file said.
		for (const line of [lines[1], lines[777], lines[10_000]]) {
			const [label, volts, mOhm, ah] = line.split(',');
			const [row] = await db.select().from(cells).where(and(eq(cells.packId, pack.id), eq(cells.label, label)));
			expect([row.arrivalVolts, row.resistanceMilliOhms, row.capacityAh]).toEqual([Number(volts), Number(mOhm), Number(ah)]);
		}
	});
});

describe('matching', () => {
	async function measuredPack() {
		const f = await packFixture({ series: 3, parallel: 2 });
		// Seven cells for 3S2P: one spare; one far too low to use.
		const rows = [4.02, 3.98, 4.0, 4.05, 3.95, 4.01, 3.99].map((ah, i) => ({
			label: `M${i + 1}`,
			volts: 3.6,
			resistanceMilliOhms: 16 + i,
			capacityAh: ah
		}));
		rows.push({ label: 'LOW', volts: 1.5, resistanceMilliOhms: 16, capacityAh: 4 });
		expect(await addCells(f.owner, f.pack.id, rows)).toEqual({ ok: true, imported: 8 });
		return f;
	}

	it('proposes S × P cells, leaves the rejected one out, and saves atomically', async () => {
		const { owner, pack } = await measuredPack();
		const proposal = await proposeMatching(owner, pack.id, { includeSuspect: false });
		if (!proposal.ok) throw new Error(proposal.message);
		const groups = proposal.groups.map((g) => g.cellIds);
		const batch = await listBatch(owner, pack.id);
		const low = batch.cells.find((c) => c.label === 'LOW')!;
		expect(low.verdict).toBe('reject');
		expect(groups.flat()).not.toContain(low.id);
		expect(new Set(groups.flat()).size).toBe(6);

		// A bad assignment (the rejected cell in group 1) writes nothing.
		const bad = [[low.id, groups[0][1]], groups[1], groups[2]];
		expect(await acceptMatching(owner, pack.id, { groups: bad, replace: false })).toMatchObject({ ok: false, reason: 'rejected-cell' });
		expect(await db.$count(cells, and(eq(cells.packId, pack.id), eq(cells.placement, 'group')))).toBe(0);

		expect(await acceptMatching(owner, pack.id, { groups, replace: false })).toEqual({ ok: true, placed: 6, spares: 1 });
		const placed = await db
			.select({ id: cells.id, index: packGroups.index })
			.from(cells)
			.innerJoin(packGroups, eq(packGroups.id, cells.groupId))
			.where(eq(cells.packId, pack.id));
		expect(placed).toHaveLength(6);
		for (const p of placed) expect(groups[p.index - 1]).toContain(p.id);

		// A saved assignment is replaced only when asked.
		const swapped = [[groups[1][0], groups[0][1]], [groups[0][0], groups[1][1]], groups[2]];
		expect(await acceptMatching(owner, pack.id, { groups: swapped, replace: false })).toMatchObject({ reason: 'would-replace' });
		const still = await db.select({ id: cells.id }).from(cells).innerJoin(packGroups, eq(packGroups.id, cells.groupId)).where(and(eq(cells.packId, pack.id), eq(packGroups.index, 1)));
		expect(still.map((r) => r.id).sort()).toEqual([...groups[0]].sort());
		expect(await acceptMatching(owner, pack.id, { groups: swapped, replace: true })).toMatchObject({ ok: true });
	});

	it('says how many cells are missing', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 2 });
		await addCells(owner, pack.id, [1, 2, 3].map((i) => ({ label: `F${i}`, volts: 3.6, resistanceMilliOhms: null, capacityAh: null })));
		const proposal = await proposeMatching(owner, pack.id, { includeSuspect: false });
		expect(proposal).toMatchObject({ ok: false, reason: 'not-enough-cells', needed: 8, usable: 3, missing: 5 });
	});
});

describe('roles and workshops', () => {
	it('lets a technician correct a measurement but not change topology or matching', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 2 });
		await importCellCsv(owner, pack.id, commaCsv);
		const tech = await joinAs(owner, 'technician');
		const cell = (await listBatch(tech, pack.id)).cells[0];
		expect(await correctCell(tech, pack.id, cell.id, { volts: 3.7 })).toMatchObject({ ok: true });
		expect((await listBatch(owner, pack.id)).cells[0].arrivalVolts).toBe(3.7);

		await expect(updatePack(tech, pack.id, { series: 2 })).rejects.toMatchObject({ status: 403 });
		await expect(proposeMatching(tech, pack.id, { includeSuspect: false })).rejects.toMatchObject({ status: 403 });
		await expect(acceptMatching(tech, pack.id, { groups: [[cell.id]], replace: false })).rejects.toMatchObject({ status: 403 });
		expect((await requirePack(owner, pack.id)).series).toBe(1);
	});

	it('shows a viewer only the packs they own', async () => {
		const first = await packFixture({ series: 1, parallel: 1 });
		const viewer = await joinAs(first.owner, 'viewer');
		const second = await updatePack(first.owner, first.pack.id, { packOwnerId: viewer.user.id });
		expect(second.ok).toBe(true);
		// A second pack in the same workshop that the viewer does not own.
		const notMine = await createPack(first.owner, {
			name: 'Not theirs',
			cellSpecId: first.pack.cellSpecId,
			series: 1,
			parallel: 1,
			bmsFitted: false,
			bmsBalanceAmps: null,
			status: 'planning',
			packOwnerId: '',
			measuredPeakAmps: null,
			measuredPeakNote: '',
			notes: ''
		});
		if (!notMine.ok) throw new Error(notMine.message);

		expect((await listPacks(viewer)).map((p) => p.id)).toEqual([first.pack.id]);
		expect((await listPacks(first.owner)).map((p) => p.id).sort()).toEqual([first.pack.id, notMine.pack.id].sort());
		await expect(requirePack(viewer, notMine.pack.id)).rejects.toMatchObject({ status: 404 });
		expect((await requirePack(viewer, first.pack.id)).id).toBe(first.pack.id);
		await expect(updatePack(viewer, first.pack.id, { name: 'mine now' })).rejects.toMatchObject({ status: 403 });
	});

	it("answers 404 for another workshop's pack", async () => {
		const a = await packFixture({ series: 1, parallel: 1 });
		const b = await packFixture({ series: 1, parallel: 1 });
		await expect(requirePack(b.owner, a.pack.id)).rejects.toMatchObject({ status: 404 });
		await expect(listBatch(b.owner, a.pack.id)).rejects.toMatchObject({ status: 404 });
		await expect(importCellCsv(b.owner, a.pack.id, commaCsv)).rejects.toMatchObject({ status: 404 });
		expect(await db.$count(cells, eq(cells.packId, a.pack.id))).toBe(0);
	});

	it('keeps groups 1..S in step with the topology and clears a matching it no longer fits', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 1 });
		await importCellCsv(owner, pack.id, 'label,volts,capacity_ah\nA,3.6,4\nB,3.6,4.1\n');
		const proposal = await proposeMatching(owner, pack.id, { includeSuspect: false });
		if (!proposal.ok) throw new Error(proposal.message);
		await acceptMatching(owner, pack.id, { groups: proposal.groups.map((g) => g.cellIds), replace: false });
		const result = await updatePack(owner, pack.id, { series: 3 });
		expect(result).toMatchObject({ ok: true, clearedAssignment: true });
		const indexes = (await db.select({ i: packGroups.index }).from(packGroups).where(eq(packGroups.packId, pack.id))).map((r) => r.i).sort();
		expect(indexes).toEqual([1, 2, 3]);
		expect(await db.$count(cells, and(eq(cells.packId, pack.id), eq(cells.placement, 'group')))).toBe(0);
	});
});

describe('removing a cell entered by mistake', () => {
	it('removes a loose cell, keeps one that sits in a group, and never reaches another workshop', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 1 });
		await importCellCsv(owner, pack.id, 'label,volts,capacity_ah\nA,3.6,4\nB,3.6,4.1\n');
		const proposal = await proposeMatching(owner, pack.id, { includeSuspect: false });
		if (!proposal.ok) throw new Error(proposal.message);
		await acceptMatching(owner, pack.id, { groups: proposal.groups.map((g) => g.cellIds), replace: false });
		const batch = (await listBatch(owner, pack.id)).cells;
		const placed = batch.find((c) => c.placement === 'group')!;
		const spare = batch.find((c) => c.placement === 'spare')!;

		expect(await removeCell(owner, pack.id, placed.id)).toMatchObject({ ok: false, reason: 'in-group' });
		const stranger = await packFixture({ series: 1, parallel: 1 });
		await expect(removeCell(stranger.owner, pack.id, spare.id)).rejects.toMatchObject({ status: 404 });
		expect(await removeCell(owner, pack.id, spare.id)).toEqual({ ok: true });
		expect((await listBatch(owner, pack.id)).cells.map((c) => c.id)).toEqual([placed.id]);
	});
});
