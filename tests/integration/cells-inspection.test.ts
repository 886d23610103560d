/**
 * Issue 7, cells: an over-discharged cell is never placed, "include suspect cells" takes the
 * fewest and least risky, and an edited measurement judges the cell again.
 */
import { and, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { groupStatistics } from '$lib/group-stats';
import { addCells, correctCell, listBatch } from '$lib/server/cells';
import { db } from '$lib/server/db';
import { cells } from '$lib/server/db/schema';
import { acceptMatching, proposeMatching } from '$lib/server/matching';
import { packFixture } from './helpers';

// Invented measurements (test data); the thresholds they cross are BU-216's NMC minimum of 2.50 V
// and the common-practice suspect rules of docs/engine.md.
const cell = (label: string, volts: number, resistanceMilliOhms: number | null = 20, capacityAh: number | null = 4) => ({
	label,
	volts,
	resistanceMilliOhms,
	capacityAh
});

describe('an over-discharged cell', () => {
	it('a 2.10 V NMC cell is rejected with its reason and never placed, even with "include suspect cells"', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 2 });
		await addCells(owner, pack.id, [cell('C1', 3.6), cell('C2', 3.61), cell('C3', 3.59), cell('C4', 2.1)]);
		const batch = await listBatch(owner, pack.id);
		const flat = batch.cells.find((c) => c.label === 'C4')!;
		expect(flat.verdict).toBe('reject');
		expect(flat.reasons).toEqual([
			'arrived at 2.10 V, below the 2.50 V minimum: over-discharged — do not charge it; tape its terminals and take it to a recycler'
		]);
		const proposal = await proposeMatching(owner, pack.id, { includeSuspect: true });
		expect(proposal).toMatchObject({ ok: false, reason: 'not-enough-cells', needed: 4, usable: 3, missing: 1 });
		expect(await acceptMatching(owner, pack.id, { groups: [[batch.cells[0].id, batch.cells[1].id], [batch.cells[2].id, flat.id]], replace: false })).toMatchObject({ ok: false, reason: 'rejected-cell' });
	});
});

describe('include suspect cells', () => {
	it('takes only as many as the pack is short, least risky first, and says which and why', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 2 });
		await addCells(owner, pack.id, [
			cell('G1', 3.6),
			cell('G2', 3.6),
			cell('G3', 3.6),
			cell('LOWV', 3.4), // more than 100 mV under the batch median 3.60 V
			cell('HIGHR', 3.6, 32), // over 1.5 × the median 20 mΩ
			cell('WEAK', 3.6, 20, 3.6) // more than 5 % under the median 4.00 Ah
		]);
		const without = await proposeMatching(owner, pack.id, { includeSuspect: false });
		expect(without).toMatchObject({ ok: false, missing: 1 });

		const proposal = await proposeMatching(owner, pack.id, { includeSuspect: true });
		if (!proposal.ok) throw new Error(proposal.message);
		const labelOf = new Map((await listBatch(owner, pack.id)).cells.map((c) => [c.id, c.label]));
		// Short by one: the capacity shortfall goes in; the resistance and voltage outliers stay spares.
		expect(proposal.groups.flatMap((g) => g.cellIds).map((id) => labelOf.get(id)).sort()).toEqual(['G1', 'G2', 'G3', 'WEAK']);
		expect(proposal.spares.map((id) => labelOf.get(id)).sort()).toEqual(['HIGHR', 'LOWV']);
		expect(proposal.suspectsUsed.map((s) => s.label)).toEqual(['WEAK']);
		expect(proposal.suspectsUsed[0].reasons[0]).toMatch(/^capacity 3\.60 Ah, 10 % under the batch median 4\.00 Ah/);
		expect(proposal.suspectsLeft).toBe(2);
		expect(proposal.suspectNote).toMatch(/^The good cells were 1 cell short, so the least risky suspect cell went in: WEAK \(capacity .*\)\. The other 2 suspect cells stay spares\.$/);
	});

	it('uses no suspect cell when the good ones are enough', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 2 });
		await addCells(owner, pack.id, [cell('A1', 3.6), cell('A2', 3.6), cell('A3', 3.6), cell('HOT', 3.6, 45)]);
		const proposal = await proposeMatching(owner, pack.id, { includeSuspect: true });
		if (!proposal.ok) throw new Error(proposal.message);
		expect(proposal.suspectsUsed).toEqual([]);
		const hot = (await listBatch(owner, pack.id)).cells.find((c) => c.label === 'HOT')!;
		expect(proposal.spares).toContain(hot.id);
	});
});

describe('editing a measurement judges the cell again', () => {
	it('a cell rejected by a typo comes back to the cells not placed', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 2 });
		await addCells(owner, pack.id, [cell('T1', 3.6), cell('T2', 3.6), cell('T3', 0.36)]);
		const before = await listBatch(owner, pack.id);
		const typo = before.cells.find((c) => c.label === 'T3')!;
		expect(typo.verdict).toBe('reject');
		// Accepting a matching sets rejected cells aside.
		const good = before.cells.filter((c) => c.label !== 'T3').map((c) => c.id);
		expect(await acceptMatching(owner, pack.id, { groups: [good], replace: false })).toMatchObject({ ok: true });
		expect((await db.select().from(cells).where(eq(cells.id, typo.id)))[0].placement).toBe('rejected');

		const fixed = await correctCell(owner, pack.id, typo.id, { volts: 3.6 });
		expect(fixed).toMatchObject({ ok: true, cell: { verdict: 'ok', placement: 'unsorted' } });
		const after = (await listBatch(owner, pack.id)).cells.find((c) => c.id === typo.id)!;
		expect([after.verdict, after.placement]).toEqual(['ok', 'unsorted']);
		// Back in the pool: a proposal may use it again.
		const replacement = await acceptMatching(owner, pack.id, { groups: [[good[0], typo.id]], replace: true });
		expect(replacement).toMatchObject({ ok: true, placed: 2 });
	});

	it('a placed cell that becomes rejected stays in its group and is flagged: "G1 holds a rejected cell"', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 1 });
		await addCells(owner, pack.id, [cell('P1', 3.6), cell('P2', 3.6)]);
		const before = await listBatch(owner, pack.id);
		const [p1, p2] = before.cells;
		expect(await acceptMatching(owner, pack.id, { groups: [[p1.id], [p2.id]], replace: false })).toMatchObject({ ok: true });

		const edited = await correctCell(owner, pack.id, p1.id, { volts: 2.1 });
		if (!edited.ok) throw new Error(edited.message);
		expect(edited.message).toMatch(/^P1 saved\. It is now rejected and sits in G1: arrived at 2\.10 V, below the 2\.50 V minimum/);
		const stored = await db.select().from(cells).where(and(eq(cells.packId, pack.id), eq(cells.id, p1.id)));
		expect(stored[0].placement).toBe('group');

		const batch = await listBatch(owner, pack.id);
		const stats = groupStatistics(2, batch.cells, 4);
		expect(stats.warnings).toEqual([
			'G1 holds a rejected cell: P1 — arrived at 2.10 V, below the 2.50 V minimum: over-discharged — do not charge it; tape its terminals and take it to a recycler. Take it out of the pack and match again.'
		]);
	});
});
