/**
 * What the database itself guarantees, and what happens when two requests meet: matching accepts
 * and topology edits lock the pack, big assignments save in one statement, labels are unique per
 * batch regardless of case, and ranges the forms check are check constraints too.
 */
import { randomUUID } from 'node:crypto';
import { and, eq, sql } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import type { CellRow } from '$lib/cells-csv';
import { addCells } from '$lib/server/cells';
import { db, sqlClient } from '$lib/server/db';
import { PG, pgCode } from '$lib/server/db/errors';
import { cells, cellSpecs, chargerChannels, chargers, memberships, packGroups, packs } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { acceptMatching, proposeMatching } from '$lib/server/matching';
import { updatePack } from '$lib/server/packs';
import { removeMember } from '$lib/server/workshops-members';
import * as cellsApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/cells/+server';
import * as cellsPage from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/cells/+page.server';
import * as matchingApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/matching/+server';
import { apiEvent, joinAs, packFixture } from './helpers';

// Invented measurements (test data, not check values): near-identical healthy NMC cells.
const healthy = (n: number, prefix = 'K'): CellRow[] =>
	Array.from({ length: n }, (_, i) => ({
		label: `${prefix}${i + 1}`,
		volts: 3.6 + (i % 5) / 1000,
		resistanceMilliOhms: 16 + (i % 3),
		capacityAh: 4 + (i % 7) / 100
	}));

async function matchedFixture(series: number, parallel: number, extra = 1) {
	const f = await packFixture({ series, parallel });
	expect(await addCells(f.owner, f.pack.id, healthy(series * parallel + extra))).toEqual({
		ok: true,
		imported: series * parallel + extra
	});
	const proposal = await proposeMatching(f.owner, f.pack.id, { includeSuspect: false });
	if (!proposal.ok) throw new Error(proposal.message);
	return { ...f, proposal, groups: proposal.groups.map((g) => g.cellIds) };
}

const placedCount = async (packId: string) =>
	db.$count(cells, and(eq(cells.packId, packId), eq(cells.placement, 'group')));
const groupCount = async (packId: string) => db.$count(packGroups, eq(packGroups.packId, packId));

/** Waits until some backend is waiting for a lock (so the request under test is really blocked). */
async function untilSomeoneWaitsForALock() {
	for (let i = 0; i < 200; i++) {
		const [row] = await sqlClient()`
			select count(*)::int as n from pg_stat_activity
			where datname = current_database() and wait_event_type = 'Lock'`;
		if (row.n > 0) return;
		await new Promise((r) => setTimeout(r, 10));
	}
	throw new Error('nobody waited for the lock');
}

describe('matching accept and pack edits (one lock on the pack row)', () => {
	it('refuses an accept whose proposal is older than a topology change, placing nothing', async () => {
		const f = await matchedFixture(3, 2);
		expect(await updatePack(f.owner, f.pack.id, { parallel: 3 })).toMatchObject({ ok: true });
		const result = await acceptMatching(f.owner, f.pack.id, { groups: f.groups, replace: false, version: f.proposal.version });
		expect(result).toEqual({ ok: false, reason: 'pack-changed', message: 'The pack changed while you were matching — propose again.' });
		expect(await placedCount(f.pack.id)).toBe(0);
	});

	it('answers a stale accept through the API with 409 and the words to propose again', async () => {
		const f = await matchedFixture(2, 2);
		const ws = f.owner.workshop.slug;
		const base = `/api/w/${ws}/packs/${f.pack.id}`;
		const params = { workshop: ws, packId: f.pack.id };
		// A cell added after the proposal changes the batch it was made from.
		expect(await addCells(f.owner, f.pack.id, healthy(1, 'late'))).toMatchObject({ ok: true });
		type Ev = Parameters<typeof matchingApi.PUT>[0];
		const body = { groups: f.groups, version: f.proposal.version };
		const response = await matchingApi.PUT(apiEvent<Ev>(f.owner, `${base}/matching`, params, { method: 'PUT', body }));
		expect(response.status).toBe(409);
		expect(await response.json()).toEqual({
			message: 'The pack changed while you were matching — propose again.',
			reason: 'pack-changed'
		});
		expect(await placedCount(f.pack.id)).toBe(0);
	});

	it('reads the batch again once it holds the lock: a change committed while it waited is a 409, not a stale save', async () => {
		const f = await matchedFixture(3, 2);
		const lockHolder = await sqlClient().reserve();
		try {
			await lockHolder`begin`;
			await lockHolder`select id from packs where id = ${f.pack.id} for update`;
			const accepting = acceptMatching(f.owner, f.pack.id, { groups: f.groups, replace: false, version: f.proposal.version });
			await untilSomeoneWaitsForALock();
			// What a topology edit does, committed while the accept waits.
			await lockHolder`update packs set parallel = 3 where id = ${f.pack.id}`;
			await lockHolder`commit`;
			expect(await accepting).toMatchObject({ ok: false, reason: 'pack-changed' });
		} finally {
			lockHolder.release();
		}
		expect(await placedCount(f.pack.id)).toBe(0);
	});

	it('never saves half an assignment when a cell of it is removed while the accept runs', async () => {
		const f = await matchedFixture(3, 2);
		const [removed] = f.groups[2];
		const lockHolder = await sqlClient().reserve();
		try {
			// A removal in progress (what removeCell does to a loose cell), committed while the accept waits.
			await lockHolder`begin`;
			await lockHolder`delete from cells where id = ${removed}`;
			const accepting = acceptMatching(f.owner, f.pack.id, { groups: f.groups, replace: false });
			await untilSomeoneWaitsForALock();
			await lockHolder`commit`;
			expect(await accepting).toMatchObject({ ok: false, reason: 'unknown-cell' });
		} finally {
			lockHolder.release();
		}
		expect(await placedCount(f.pack.id)).toBe(0);
	});

	it('of two concurrent accepts of the same proposal, exactly one saves', async () => {
		const f = await matchedFixture(4, 3, 3);
		// A second assignment of the same proposal with two cells swapped between groups 1 and 2.
		const swapped = f.groups.map((g) => [...g]);
		[swapped[0][0], swapped[1][0]] = [swapped[1][0], swapped[0][0]];
		const results = await Promise.all([
			acceptMatching(f.owner, f.pack.id, { groups: f.groups, replace: true, version: f.proposal.version }),
			acceptMatching(f.owner, f.pack.id, { groups: swapped, replace: true, version: f.proposal.version })
		]);
		expect(results.filter((r) => r.ok)).toHaveLength(1);
		expect(results.filter((r) => !r.ok)).toEqual([expect.objectContaining({ reason: 'pack-changed' })]);
		expect(await placedCount(f.pack.id)).toBe(12);
	});

	it('an accept and a topology change side by side: never an error, never half-placed cells', async () => {
		for (let round = 0; round < 3; round++) {
			const f = await matchedFixture(3, 2, 2);
			const [accepted, edited] = await Promise.all([
				acceptMatching(f.owner, f.pack.id, { groups: f.groups, replace: false, version: f.proposal.version }),
				updatePack(f.owner, f.pack.id, { series: 4 })
			]);
			expect(edited).toMatchObject({ ok: true });
			// Whichever came second, the edit leaves the pack 4S with its matching cleared.
			expect(await groupCount(f.pack.id)).toBe(4);
			expect(await placedCount(f.pack.id)).toBe(0);
			if (accepted.ok) expect(edited).toMatchObject({ clearedAssignment: true });
			else expect(accepted.reason).toBe('pack-changed');
		}
	});

	it('two concurrent series changes end with exactly as many groups as the pack has', async () => {
		const f = await packFixture({ series: 3, parallel: 2 });
		const results = await Promise.all([
			updatePack(f.owner, f.pack.id, { series: 5 }),
			updatePack(f.owner, f.pack.id, { series: 4 })
		]);
		expect(results.map((r) => r.ok)).toEqual([true, true]);
		const [pack] = await db.select().from(packs).where(eq(packs.id, f.pack.id));
		const indexes = (await db.select({ index: packGroups.index }).from(packGroups).where(eq(packGroups.packId, f.pack.id)))
			.map((g) => g.index)
			.sort((a, b) => a - b);
		expect(indexes).toEqual(Array.from({ length: pack.series }, (_, i) => i + 1));
	});
});

describe('big packs', () => {
	it('saves an assignment of 40,000 cells (more than 65,535 parameters as a VALUES list)', async () => {
		// 400S100P: the largest topology the form allows (400 groups of up to 200).
		const series = 400;
		const parallel = 100;
		const f = await packFixture({ series, parallel });
		// Generated in the database, without who-made-it (a null key skips its foreign-key check),
		// so the test's time goes to the accept under test.
		// Record ids as newId() makes them (24 of a-z, 2-7), so the request passes the API's schema.
		const prefix = newId().slice(0, 16);
		const base32 = 'abcdefghijklmnopqrstuvwxyz234567';
		const ids = Array.from(
			{ length: series * parallel },
			(_, i) => prefix + [...(i + 1).toString(32).padStart(8, '0')].map((d) => base32[parseInt(d, 32)]).join('')
		);
		await db.execute(sql`
			insert into cells (id, pack_id, label, arrival_volts)
			select t.id, ${f.pack.id}, 'B' || t.n, 3.6 from unnest(${sql.param(ids)}::text[]) with ordinality as t(id, n)`);
		// Any assignment of the right shape will do here: the engine's choice is not under test.
		const groups = Array.from({ length: series }, (_, g) => ids.slice(g * parallel, (g + 1) * parallel));
		const ws = f.owner.workshop.slug;
		type Ev = Parameters<typeof matchingApi.PUT>[0];
		const started = performance.now();
		const response = await matchingApi.PUT(
			apiEvent<Ev>(f.owner, `/api/w/${ws}/packs/${f.pack.id}/matching`, { workshop: ws, packId: f.pack.id }, {
				method: 'PUT',
				body: { groups }
			})
		);
		console.log(`40,000-cell accept through the API: ${Math.round(performance.now() - started)} ms`);
		expect(response.status).toBe(200);
		expect(await response.json()).toEqual({ ok: true, placed: 40_000, spares: 0 });
		const perGroup = await db
			.select({ index: packGroups.index, n: sql<number>`count(${cells.id})::int` })
			.from(packGroups)
			.leftJoin(cells, eq(cells.groupId, packGroups.id))
			.where(eq(packGroups.packId, f.pack.id))
			.groupBy(packGroups.index);
		expect(perGroup).toHaveLength(series);
		expect(perGroup.every((g) => g.n === parallel)).toBe(true);
		// Spot check: the 12,345th cell sits in group 124 (12,344 div 100, plus one).
		const [spot] = await db
			.select({ index: packGroups.index })
			.from(cells)
			.innerJoin(packGroups, eq(packGroups.id, cells.groupId))
			.where(eq(cells.id, ids[12_344]));
		expect(spot.index).toBe(124);
	});
});

describe('labels are unique per batch regardless of case', () => {
	it('of two concurrent imports with labels differing only in case, one is refused naming the label', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 2 });
		const results = await Promise.all([
			addCells(owner, pack.id, [{ label: 'X1', volts: 3.6, resistanceMilliOhms: null, capacityAh: null }]),
			addCells(owner, pack.id, [{ label: 'x1', volts: 3.6, resistanceMilliOhms: null, capacityAh: null }])
		]);
		expect(results.filter((r) => r.ok)).toHaveLength(1);
		const refused = results.find((r) => !r.ok);
		expect(refused).toMatchObject({ ok: false, reason: 'duplicate-label' });
		expect(refused && !refused.ok && refused.message).toMatch(/“[Xx]1” is already in the batch/);
		expect(await db.$count(cells, eq(cells.packId, pack.id))).toBe(1);
	});

	it('answers the refused one of two concurrent API imports with 409 naming the label', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 2 });
		const ws = owner.workshop.slug;
		const params = { workshop: ws, packId: pack.id };
		type Ev = Parameters<typeof cellsApi.POST>[0];
		const post = (label: string) =>
			cellsApi.POST(
				apiEvent<Ev>(owner, `/api/w/${ws}/packs/${pack.id}/cells`, params, {
					method: 'POST',
					body: { cells: [{ label, volts: 3.6 }] }
				})
			);
		const responses = await Promise.all([post('Q7'), post('q7')]);
		expect(responses.map((r) => r.status).sort()).toEqual([201, 409]);
		const refused = await responses.find((r) => r.status === 409)!.json();
		expect(refused.message).toMatch(/“[Qq]7” is already in the batch/);
	});

	it('answers a CSV import through the page with 409 naming a label the batch holds in another case', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 2 });
		expect(await addCells(owner, pack.id, healthy(2, 'R'))).toMatchObject({ ok: true });
		const ws = owner.workshop.slug;
		const url = new URL(`http://127.0.0.1/w/${ws}/packs/${pack.id}/cells`);
		const form = new FormData();
		form.append('csv', 'label,volts\nR9,3.6\nr2,3.6\n');
		const event = { locals: { user: owner.user, session: null }, params: { workshop: ws, packId: pack.id }, url, request: new Request(url, { method: 'POST', body: form }) };
		const answer = (await cellsPage.actions.importCsv(event as never)) as { status: number; data: { message: string } };
		expect(answer.status).toBe(409);
		expect(answer.data.message).toMatch(/“r2” is already in the batch/);
		expect(await db.$count(cells, eq(cells.packId, pack.id))).toBe(2);
	});

	it('refuses the same label in another case at the database', async () => {
		const { pack } = await packFixture({ series: 1, parallel: 1 });
		const row = (label: string) => ({ id: newId(), packId: pack.id, label, arrivalVolts: 3.6 });
		await db.insert(cells).values(row('Cell-7'));
		const refused = await db.insert(cells).values(row('CELL-7')).catch((e: unknown) => e);
		expect(pgCode(refused)).toBe(PG.uniqueViolation);
	});
});

describe('ranges and same-workshop keys in the database', () => {
	const long = (n: number) => 'x'.repeat(n);

	async function base() {
		const f = await packFixture({ series: 2, parallel: 1 });
		const [charger] = await db
			.insert(chargers)
			.values({ id: newId(), workshopId: f.owner.workshop.id, name: `C ${randomUUID().slice(0, 6)}`, kind: 'bench-supply' })
			.returning();
		return { ...f, charger };
	}

	/** The SQLSTATE a statement ends with, or 'ok'. */
	const outcome = (p: PromiseLike<unknown>) =>
		Promise.resolve(p).then(
			() => 'ok',
			(e: unknown) => pgCode(e) ?? String(e)
		);

	// Each row: what is out of range, and the valid value beside it (both come from the zod schemas'
	// bounds in src/lib/schemas, which the database must not be looser than).
	it.each([
		['a cell spec continuous current over 5000 A', { maxContinuousAmps: 5000.5, maxBurstAmps: null }, { maxContinuousAmps: 5000, maxBurstAmps: null }],
		['a cell spec charge current over 5000 A', { maxChargeAmps: 5001 }, { maxChargeAmps: 5000 }],
		['a cell spec burst current over 10000 A', { maxBurstAmps: 10001 }, { maxBurstAmps: 10000 }],
		['a cell spec resistance over 10000 mΩ', { resistanceMilliOhms: 10001 }, { resistanceMilliOhms: 10000 }],
		['a cell spec capacity of 0 Ah', { capacityAh: 0 }, { capacityAh: 0.1 }],
		['a burst duration of 0 s', { maxBurstSeconds: 0 }, { maxBurstSeconds: 1 }],
		['a burst duration over an hour', { maxBurstSeconds: 3601 }, { maxBurstSeconds: 3600 }],
		['a cell spec name over 80 characters', { name: long(81) }, { name: long(80) }],
		['an empty cell spec name', { name: '' }, { name: 'x' }]
	])('cell specs: refuses %s', async (_, bad, good) => {
		const { owner, spec } = await base();
		const row = (v: object) => ({ ...spec, id: newId(), name: `S ${randomUUID()}`, workshopId: owner.workshop.id, ...v });
		expect(await outcome(db.insert(cellSpecs).values(row(bad)))).toBe(PG.checkViolation);
		expect(await outcome(db.insert(cellSpecs).values(row(good)))).toBe('ok');
	});

	it.each([
		['a measured peak over 100000 A', { measuredPeakAmps: 100_001 }, { measuredPeakAmps: 100_000 }],
		['a negative measured peak', { measuredPeakAmps: -1 }, { measuredPeakAmps: 0 }],
		['a balance current over 50 A', { bmsBalanceAmps: 50.5 }, { bmsBalanceAmps: 50 }],
		['401 groups in series', { series: 401 }, { series: 400 }],
		['201 cells per group', { parallel: 201 }, { parallel: 200 }],
		['a name over 80 characters', { name: long(81) }, { name: long(80) }],
		['notes over 5000 characters', { notes: long(5001) }, { notes: long(5000) }],
		['a peak note over 500 characters', { measuredPeakNote: long(501) }, { measuredPeakNote: long(500) }]
	])('packs: refuses %s', async (_, bad, good) => {
		const { pack } = await base();
		const row = (v: object) => ({ ...pack, id: newId(), ...v });
		expect(await outcome(db.insert(packs).values(row(bad)))).toBe(PG.checkViolation);
		expect(await outcome(db.insert(packs).values(row(good)))).toBe('ok');
	});

	it.each([
		['a cell resistance over 10000 mΩ', { resistanceMilliOhms: 10_001 }, { resistanceMilliOhms: 10_000 }],
		['a cell capacity over 2000 Ah', { capacityAh: 2001 }, { capacityAh: 2000 }],
		['arrival volts over 5 V', { arrivalVolts: 5.01 }, { arrivalVolts: 5 }],
		['a label over 60 characters', { label: long(61) }, { label: long(60) }]
	])('cells: refuses %s', async (_, bad, good) => {
		const { pack } = await base();
		const row = (v: object) => ({ id: newId(), packId: pack.id, label: randomUUID().slice(0, 8), arrivalVolts: 3.6, ...v });
		expect(await outcome(db.insert(cells).values(row(bad)))).toBe(PG.checkViolation);
		expect(await outcome(db.insert(cells).values(row(good)))).toBe('ok');
	});

	it.each([
		['a power limit over 100000 W', { maxWatts: 100_001 }, { maxWatts: 100_000 }],
		['a balance current over 50 A', { balanceAmps: 51 }, { balanceAmps: 50 }],
		['a channel name over 40 characters', { name: long(41) }, { name: long(40) }],
		['a 17th channel', { position: 17 }, { position: 16 }]
	])('charger channels: refuses %s', async (_, bad, good) => {
		const { charger } = await base();
		const row = (v: object) => ({ id: newId(), chargerId: charger.id, position: 1, name: 'Ch', maxVolts: 30, maxAmps: 5, ...v });
		expect(await outcome(db.insert(chargerChannels).values(row(bad)))).toBe(PG.checkViolation);
		expect(await outcome(db.insert(chargerChannels).values(row(good)))).toBe('ok');
	});

	it('chargers: refuses a name over 80 characters and notes over 2000', async () => {
		const { owner } = await base();
		const row = (v: object) => ({ id: newId(), workshopId: owner.workshop.id, name: `N ${randomUUID()}`, kind: 'bench-supply' as const, ...v });
		expect(await outcome(db.insert(chargers).values(row({ name: long(81) })))).toBe(PG.checkViolation);
		expect(await outcome(db.insert(chargers).values(row({ notes: long(2001) })))).toBe(PG.checkViolation);
		expect(await outcome(db.insert(chargers).values(row({ notes: long(2000) })))).toBe('ok');
	});

	it("refuses a pack on another workshop's cell spec", async () => {
		const a = await base();
		const b = await base();
		expect(await outcome(db.insert(packs).values({ ...a.pack, id: newId(), cellSpecId: b.spec.id }))).toBe(PG.foreignKeyViolation);
		expect(await outcome(db.update(packs).set({ cellSpecId: b.spec.id }).where(eq(packs.id, a.pack.id)))).toBe(
			PG.foreignKeyViolation
		);
	});

	it("refuses a cell in another pack's group", async () => {
		const a = await base();
		const b = await base();
		const [otherGroup] = await db.select().from(packGroups).where(eq(packGroups.packId, b.pack.id));
		const row = { id: newId(), packId: a.pack.id, label: 'G1', arrivalVolts: 3.6, placement: 'group' as const, groupId: otherGroup.id };
		expect(await outcome(db.insert(cells).values(row))).toBe(PG.foreignKeyViolation);
	});

	it('keeps a burst duration and reads it back as maxBurstSeconds', async () => {
		const { spec } = await base();
		await db.update(cellSpecs).set({ maxBurstSeconds: 10 }).where(eq(cellSpecs.id, spec.id));
		const [row] = await db.select().from(cellSpecs).where(eq(cellSpecs.id, spec.id));
		expect(row.maxBurstSeconds).toBe(10);
	});
});

describe('a pack owner is always a member of the workshop', () => {
	const outcome = (p: PromiseLike<unknown>) =>
		Promise.resolve(p).then(
			() => 'ok',
			(e: unknown) => pgCode(e) ?? String(e)
		);

	it('refuses a pack owner who is not a member, at the database', async () => {
		const a = await packFixture({ series: 1, parallel: 1 });
		const b = await packFixture({ series: 1, parallel: 1 });
		// b's owner has an account but no membership in a's workshop.
		expect(await outcome(db.update(packs).set({ packOwnerId: b.owner.user.id }).where(eq(packs.id, a.pack.id)))).toBe(
			PG.foreignKeyViolation
		);
	});

	it('clears the pack owner when the membership row goes, whoever deletes it', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 1 });
		const viewer = await joinAs(owner, 'viewer');
		await db.update(packs).set({ packOwnerId: viewer.user.id }).where(eq(packs.id, pack.id));
		await db
			.delete(memberships)
			.where(and(eq(memberships.workshopId, owner.workshop.id), eq(memberships.userId, viewer.user.id)));
		const [row] = await db.select().from(packs).where(eq(packs.id, pack.id));
		expect(row.packOwnerId).toBeNull();
	});

	it('a pack owner named at the moment the member is removed never outlives the membership', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 1 });
		for (let round = 0; round < 4; round++) {
			const viewer = await joinAs(owner, 'viewer');
			const [named] = await Promise.allSettled([
				updatePack(owner, pack.id, { packOwnerId: viewer.user.id }),
				removeMember(owner, viewer.user.id)
			]);
			// Naming the owner may lose the race: a refusal in words, or the database's foreign-key
			// refusal, which the API and form actions answer with 409 (input-problems.ts).
			if (named.status === 'rejected') expect(pgCode(named.reason)).toBe(PG.foreignKeyViolation);
			const [row] = await db.select().from(packs).where(eq(packs.id, pack.id));
			const [stillMember] = await db
				.select()
				.from(memberships)
				.where(and(eq(memberships.workshopId, owner.workshop.id), eq(memberships.userId, viewer.user.id)));
			expect(stillMember).toBeUndefined();
			expect(row.packOwnerId).toBeNull();
		}
	});
});
