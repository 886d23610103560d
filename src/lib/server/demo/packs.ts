/**
 * The demo workshop's cell specs, packs and cells (shared docs: demo-scenario.md). Invented
 * numbers for trying Cellsitter out — never a test's check value. The "random" spread comes from a
 * fixed seed so every demo looks the same.
 */
import { matchCells } from '$lib/engine';
import type { Tx } from '../db';
import { cells, cellSpecs, packGroups, packs } from '../db/schema';
import { newId } from '../ids';

/** A small fixed-seed generator (mulberry32): the same demo every time. */
export function seeded(seed: number) {
	let a = seed;
	return () => {
		a = (a + 0x6d2b79f5) | 0;
		let t = Math.imul(a ^ (a >>> 15), 1 | a);
		t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

type DemoCell = { label: string; volts: number; mOhm: number | null; ah: number | null };

function batch(prefix: string, n: number, rand: () => number, v: [number, number], mOhm: [number, number], ah: [number, number]): DemoCell[] {
	const between = ([lo, hi]: [number, number], digits: number) => Number((lo + rand() * (hi - lo)).toFixed(digits));
	return Array.from({ length: n }, (_, i) => ({
		label: `${prefix}${String(i + 1).padStart(2, '0')}`,
		volts: between(v, 3),
		mOhm: between(mOhm, 1),
		ah: between(ah, 3)
	}));
}

type People = { owner: string; builder: string; technician: string; viewer: string };

/**
 * The demo packs' notes. A night charge in them always has someone awake on watch (demo-scenario.md):
 * the demo must never show a charge left alone.
 */
export const demoPackNotes = {
	trike:
		'First top balance ran overnight on the four-channel charger, three or four groups at a time, with the technician awake on a night watch at the bench and readings every hour.',
	camper:
		'Bulk charged, then topped up one cell at a time with the bench supply, only within the hands-on hours 07:00–23:00 while someone is at the bench.'
};

export async function loadDemoPacks(tx: Tx, workshopId: string, people: People): Promise<void> {
	const rand = seeded(20261202);
	const by = { createdBy: people.builder, updatedBy: people.builder };
	const spec = async (values: Omit<typeof cellSpecs.$inferInsert, 'id' | 'workshopId'>) => {
		const [row] = await tx.insert(cellSpecs).values({ id: newId(), workshopId, ...by, ...values }).returning();
		return row;
	};
	const nmc = await spec({ name: 'NMC 21700 4.0 Ah', chemistryId: 'nmc', capacityAh: 4.0, maxContinuousAmps: 15, maxBurstAmps: 30, maxBurstSeconds: 10, maxChargeAmps: 4, resistanceMilliOhms: 16 });
	const lfp = await spec({ name: 'LFP prismatic 105 Ah', chemistryId: 'lfp', capacityAh: 105, maxContinuousAmps: 105, maxBurstAmps: 210, maxBurstSeconds: 10, maxChargeAmps: 52.5, resistanceMilliOhms: 0.3 });
	const nca = await spec({ name: 'NCA 18650 3.4 Ah', chemistryId: 'nca', capacityAh: 3.4, maxContinuousAmps: 10, maxChargeAmps: 1.7, resistanceMilliOhms: 35 });

	// Cargo trike: 52 cells plus 4 spares; two came in low and stay out of the groups.
	const trikeCells = batch('T', 56, rand, [3.45, 3.55], [14.5, 18.5], [3.92, 4.06]);
	trikeCells[16] = { ...trikeCells[16], volts: 3.21 };
	trikeCells[41] = { ...trikeCells[41], volts: 3.3 };
	await addPack(tx, workshopId, people, {
		pack: { name: 'Cargo trike pack', cellSpecId: nmc.id, series: 13, parallel: 4, status: 'in-service', packOwnerId: people.viewer, bmsFitted: true, bmsBalanceAmps: 0.05, measuredPeakAmps: 38, measuredPeakNote: 'Clamp meter on the main lead, full load up the hill on Quarry Lane', notes: demoPackNotes.trike },
		cells: trikeCells,
		skip: new Set([trikeCells[16].label, trikeCells[41].label])
	});

	await addPack(tx, workshopId, people, {
		pack: { name: 'Camper house battery', cellSpecId: lfp.id, series: 4, parallel: 1, status: 'in-service', bmsFitted: true, bmsBalanceAmps: 0.15, notes: demoPackNotes.camper },
		cells: batch('H', 4, rand, [3.28, 3.31], [0.25, 0.32], [104, 107]),
		skip: new Set()
	});

	await addPack(tx, workshopId, people, {
		pack: { name: 'Shop scooter pack', cellSpecId: nca.id, series: 10, parallel: 3, status: 'building', bmsFitted: false },
		cells: batch('S', 30, rand, [3.58, 3.64], [30, 40], [3.3, 3.45]),
		skip: new Set()
	});
}

async function addPack(
	tx: Tx,
	workshopId: string,
	people: People,
	demo: { pack: Omit<typeof packs.$inferInsert, 'id' | 'workshopId'>; cells: DemoCell[]; skip: Set<string> }
) {
	const by = { createdBy: people.builder, updatedBy: people.builder };
	const [pack] = await tx.insert(packs).values({ id: newId(), workshopId, ...by, ...demo.pack }).returning();
	const groups = await tx
		.insert(packGroups)
		.values(Array.from({ length: pack.series }, (_, i) => ({ id: newId(), packId: pack.id, index: i + 1 })))
		.returning();
	const rows = demo.cells.map((c) => ({ id: newId(), ...c }));
	const match = matchCells({
		cells: rows.filter((c) => !demo.skip.has(c.label)).map((c) => ({ id: c.id, capacityAh: c.ah ?? 1, resistanceMilliOhms: c.mOhm ?? undefined })),
		series: pack.series,
		parallel: pack.parallel
	});
	const groupOf = new Map<string, string>();
	if (match.ok) match.groups.forEach((g, i) => g.cellIds.forEach((id) => groupOf.set(id, groups.find((x) => x.index === i + 1)!.id)));
	await tx.insert(cells).values(
		rows.map((c) => ({
			id: c.id,
			packId: pack.id,
			label: c.label,
			arrivalVolts: c.volts,
			resistanceMilliOhms: c.mOhm,
			capacityAh: c.ah,
			placement: groupOf.has(c.id) ? ('group' as const) : ('spare' as const),
			groupId: groupOf.get(c.id) ?? null,
			createdBy: people.technician,
			updatedBy: people.technician
		}))
	);
}
