/**
 * Issue 10, part 3: the self-discharge check. Re-measured volts are stored all or nothing, the
 * cell (or group) that loses charge faster than the batch is named with its numbers, and a viewer
 * reads their own pack's checks but cannot store any.
 */
import { eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { addCells, listBatch } from '$lib/server/cells';
import { db } from '$lib/server/db';
import { cells, packs, voltageChecks } from '$lib/server/db/schema';
import { acceptMatching } from '$lib/server/matching';
import { getSelfDischarge, storeVoltageChecks } from '$lib/server/self-discharge';
import type { Member } from '$lib/server/auth/permissions';
import { selfDischargeWords } from '$lib/self-discharge-words';
import * as page from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/self-discharge/+page.server';
import { loadDemoSelfDischarge } from '$lib/server/demo/self-discharge';
import { joinAs, packFixture } from './helpers';

const DAY = 86_400_000;

type ActionEvent = Parameters<typeof page.actions.record>[0];
type LoadEvent = Parameters<typeof page.load>[0];

function recordEvent(who: Member, packId: string, fields: [string, string][]): ActionEvent {
	const path = `/w/${who.workshop.slug}/packs/${packId}/self-discharge`;
	const url = new URL(`http://127.0.0.1${path}?/record`);
	const body = new FormData();
	for (const [k, v] of fields) body.append(k, v);
	return {
		locals: { user: who.user, session: null },
		params: { workshop: who.workshop.slug, packId },
		url,
		request: new Request(url, { method: 'POST', body })
	} as unknown as ActionEvent;
}

async function statusOf(work: () => unknown): Promise<number | null> {
	try {
		await work();
		return null;
	} catch (e) {
		return (e as { status?: number }).status ?? -1;
	}
}

const countChecks = async (packId: string) => (await db.select().from(voltageChecks).where(eq(voltageChecks.packId, packId))).length;

/*
 * Invented batch (test data). Arrival 4 days before the re-measure; drops in mV over 4 days:
 * T1 8, T2 12, T3 12, T4 16, T5 20, T17 84 → 2, 3, 3, 4, 5, 21 mV/day.
 * Median (3 + 4) / 2 = 3.5; deviations 1.5, 0.5, 0.5, 0.5, 1.5, 17.5 → MAD (0.5 + 1.5) / 2 = 1;
 * 3 × 1.4826 × 1 = 4.45 < 5 → threshold 8.5 mV/day: T17 only.
 */
const arrivals: [string, number, number][] = [
	['T1', 3.6, 3.592],
	['T2', 3.6, 3.588],
	['T3', 3.61, 3.598],
	['T4', 3.605, 3.589],
	['T5', 3.6, 3.58],
	['T17', 3.62, 3.536]
];

async function looseBatch() {
	const f = await packFixture({ series: 2, parallel: 3 });
	await addCells(f.owner, f.pack.id, arrivals.map(([label, volts]) => ({ label, volts, resistanceMilliOhms: 20, capacityAh: 4 })));
	// The arrival measure is when the cells were entered: 4 days ago for this test.
	await db.update(cells).set({ createdAt: new Date(Date.now() - 4 * DAY) }).where(eq(cells.packId, f.pack.id));
	const batch = await listBatch(f.owner, f.pack.id);
	const idOf = new Map(batch.cells.map((c) => [c.label, c.id]));
	return { ...f, idOf };
}

describe('self-discharge check of loose cells', () => {
	it('stores a round through the page and names the cell that loses charge faster, with its numbers', async () => {
		const { owner, pack, idOf } = await looseBatch();
		const technician = await joinAs(owner, 'technician');
		const fields: [string, string][] = [['measuredAt', '']];
		for (const [label, , volts] of arrivals) fields.push(['target', idOf.get(label)!], ['volts', String(volts).replace('.', ',')]);
		const answer = await page.actions.record(recordEvent(technician, pack.id, fields));
		expect(answer).toEqual({ done: 'Saved 6 voltages.' });
		expect(await countChecks(pack.id)).toBe(6);

		const view = await getSelfDischarge(owner, pack.id);
		expect(view.mode).toBe('cells');
		if (!view.result?.ok) throw new Error('no result');
		expect(view.result.medianMvPerDay).toBeCloseTo(3.5, 1);
		expect(view.result.thresholdMvPerDay).toBeCloseTo(8.5, 1);
		expect(view.result.fast.map((f) => f.label)).toEqual(['T17']);
		const words = selfDischargeWords(view);
		// 84 mV over 4 days less the few ms the test takes: 21 mV/day as shown.
		expect(words.fast[0].sentence).toBe("T17 lost 21 mV/day (84 mV in 4 days); the batch's median is 3.5 mV/day.");
		expect(words.practice).toMatch(/common practice/);
		expect(words.fastAdvice).toMatch(/do not build it into a pack/);
	});

	it('saves nothing when one value is not a voltage, and says which (400)', async () => {
		const { owner, pack, idOf } = await looseBatch();
		const fields: [string, string][] = [['measuredAt', '']];
		for (const [label, , volts] of arrivals) fields.push(['target', idOf.get(label)!], ['volts', label === 'T4' ? '3.5x' : String(volts)]);
		const answer = (await page.actions.record(recordEvent(owner, pack.id, fields))) as { status: number; data: { problem: string } };
		expect(answer.status).toBe(400);
		expect(answer.data.problem).toBe('Nothing was saved: T4: volts must be a number.');
		expect(await countChecks(pack.id)).toBe(0);

		const out = (await page.actions.record(
			recordEvent(owner, pack.id, [['measuredAt', ''], ['target', idOf.get('T1')!], ['volts', '3.59'], ['target', idOf.get('T2')!], ['volts', '7.2']])
		)) as { status: number; data: { problem: string } };
		expect(out.status).toBe(400);
		expect(out.data.problem).toBe('Nothing was saved: T2: volts must be between 0 and 5.');
		expect(await countChecks(pack.id)).toBe(0);
	});

	it('refuses a cell of another pack and a time in the future, storing nothing', async () => {
		const a = await looseBatch();
		const other = await packFixture({ series: 1, parallel: 1 });
		await addCells(other.owner, other.pack.id, [{ label: 'X1', volts: 3.6, resistanceMilliOhms: null, capacityAh: null }]);
		const [x1] = (await listBatch(other.owner, other.pack.id)).cells;
		const foreign = await storeVoltageChecks(a.owner, a.pack.id, { measuredAt: new Date(), entries: [{ targetId: x1.id, volts: 3.5 }] });
		expect(foreign).toMatchObject({ ok: false, status: 409 });
		const future = await storeVoltageChecks(a.owner, a.pack.id, {
			measuredAt: new Date(Date.now() + DAY),
			entries: [{ targetId: a.idOf.get('T1')!, volts: 3.5 }]
		});
		expect(future).toMatchObject({ ok: false, status: 400, message: expect.stringMatching(/in the future/) });
		expect(await countChecks(a.pack.id)).toBe(0);
	});

	it('lists cells re-measured too soon with the reason instead of judging them', async () => {
		const { owner, pack, idOf } = await looseBatch();
		await db.update(cells).set({ createdAt: new Date(Date.now() - DAY) }).where(eq(cells.packId, pack.id));
		await storeVoltageChecks(owner, pack.id, { measuredAt: new Date(), entries: arrivals.map(([l, , v]) => ({ targetId: idOf.get(l)!, volts: v })) });
		const words = selfDischargeWords(await getSelfDischarge(owner, pack.id));
		expect(words.fast).toEqual([]);
		expect(words.tooSoon).toMatch(/T1 \(1 day\).*Wait at least 3 days at rest before measuring again/);
		expect(words.failure).toMatch(/at least 5 cells or groups/);
	});
});

describe('who may check', () => {
	it('a viewer reads the checks of their own pack only, and cannot store any (403)', async () => {
		const { owner, pack, idOf } = await looseBatch();
		const viewer = await joinAs(owner, 'viewer');
		const entries = [{ targetId: idOf.get('T1')!, volts: 3.59 }];
		expect(await statusOf(() => getSelfDischarge(viewer, pack.id))).toBe(404);
		await db.update(packs).set({ packOwnerId: viewer.user.id }).where(eq(packs.id, pack.id));
		const loaded = (await page.load({
			locals: { user: viewer.user, session: null },
			params: { workshop: viewer.workshop.slug, packId: pack.id },
			url: new URL(`http://127.0.0.1/w/${viewer.workshop.slug}/packs/${pack.id}/self-discharge`)
		} as unknown as LoadEvent)) as { canMeasure: boolean; targets: unknown[] };
		expect(loaded.canMeasure).toBe(false);
		expect(loaded.targets).toHaveLength(6);
		expect(await statusOf(() => storeVoltageChecks(viewer, pack.id, { measuredAt: new Date(), entries }))).toBe(403);
		expect(
			await statusOf(() => page.actions.record(recordEvent(viewer, pack.id, [['measuredAt', ''], ['target', idOf.get('T1')!], ['volts', '3.59']])))
		).toBe(403);
		expect(await countChecks(pack.id)).toBe(0);
	});
});

describe('self-discharge check of a built pack', () => {
	/*
	 * Five groups of one cell, checked twice 4 days apart. Drops 8, 12, 12, 16, 100 mV →
	 * 2, 3, 3, 4, 25 mV/day; median 3; deviations 1, 0, 0, 1, 22 → MAD 1; threshold 3 + 5 = 8: G5.
	 */
	it('measures the groups once cells sit in them, and names the fast group', async () => {
		const { owner, pack } = await packFixture({ series: 5, parallel: 1 });
		await addCells(owner, pack.id, ['A', 'B', 'C', 'D', 'E'].map((label) => ({ label, volts: 3.6, resistanceMilliOhms: 20, capacityAh: 4 })));
		const batch = await listBatch(owner, pack.id);
		expect(await acceptMatching(owner, pack.id, { groups: batch.cells.map((c) => [c.id]), replace: false })).toMatchObject({ ok: true });

		const before = await getSelfDischarge(owner, pack.id);
		expect(before.mode).toBe('groups');
		expect(before.targets.map((t) => t.label)).toEqual(['G1', 'G2', 'G3', 'G4', 'G5']);
		const ids = before.targets.map((t) => t.id);
		const start = new Date(Date.now() - 4 * DAY);
		await storeVoltageChecks(owner, pack.id, { measuredAt: start, entries: ids.map((targetId) => ({ targetId, volts: 3.6 })) });
		expect(selfDischargeWords(await getSelfDischarge(owner, pack.id)).notMeasured).toMatch(/Only one measure so far: G1, G2, G3, G4, G5/);

		const drops = [8, 12, 12, 16, 100];
		await storeVoltageChecks(owner, pack.id, {
			measuredAt: new Date(start.getTime() + 4 * DAY),
			entries: ids.map((targetId, i) => ({ targetId, volts: 3.6 - drops[i] / 1000 }))
		});
		const view = await getSelfDischarge(owner, pack.id);
		if (!view.result?.ok) throw new Error('no result');
		expect(view.result.medianMvPerDay).toBeCloseTo(3, 6);
		expect(view.result.thresholdMvPerDay).toBeCloseTo(8, 6);
		const words = selfDischargeWords(view);
		expect(words.fast.map((f) => f.sentence)).toEqual(["G5 lost 25 mV/day (100 mV in 4 days); the batch's median is 3 mV/day."]);
		expect(words.fastAdvice).toMatch(/Keep the pack out of service/);
	});
});

describe("the demo's check", () => {
	it("names group 7 of the cargo trike, the group that ended its charge below the others", async () => {
		const { owner, pack } = await packFixture({ series: 13, parallel: 1 });
		await db.update(packs).set({ name: 'Cargo trike pack' }).where(eq(packs.id, pack.id));
		await addCells(owner, pack.id, Array.from({ length: 13 }, (_, i) => ({ label: `T${i + 1}`, volts: 3.5, resistanceMilliOhms: 16, capacityAh: 4 })));
		const batch = await listBatch(owner, pack.id);
		expect(await acceptMatching(owner, pack.id, { groups: batch.cells.map((c) => [c.id]), replace: false })).toMatchObject({ ok: true });
		await loadDemoSelfDischarge(owner.workshop.slug, owner.user.email);
		const words = selfDischargeWords(await getSelfDischarge(owner, pack.id));
		expect(words.failure).toBeNull();
		expect(words.fast.map((f) => f.label)).toEqual(['G7']);
		expect(words.gained).toEqual([]);
	});
});
