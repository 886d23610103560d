// The run screen's one readings query against the real test database: the newest two of each
// group (and of the whole pack), the newest with volts and with a temperature even when later
// readings lack them, the newest room temperature, and every reading of the running step.
import { randomUUID } from 'node:crypto';
import { asc, eq } from 'drizzle-orm';
import { expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { chargeSessions, packGroups, readings, sessionSteps } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { loadRunReadings } from '$lib/server/sessions/run-view';
import { packFixture } from './helpers';

const MINUTE = 60_000;

it('reads what the run screen needs and no more', async () => {
	const { owner, pack } = await packFixture({ series: 3, parallel: 1 });
	const groups = await db.select().from(packGroups).where(eq(packGroups.packId, pack.id)).orderBy(asc(packGroups.index));
	const t0 = new Date('2026-03-01T06:00:00Z').getTime();
	const sessionId = newId();
	await db.insert(chargeSessions).values({
		id: sessionId,
		workshopId: owner.workshop.id,
		packId: pack.id,
		kind: 'one-at-a-time',
		setVolts: 4.2,
		plannedStart: new Date(t0),
		handsOn: { daily: [], once: [] },
		limits: {},
		status: 'running',
		startedAt: new Date(t0)
	});
	const stepId = newId();
	await db.insert(sessionSteps).values({
		id: stepId,
		sessionId,
		position: 1,
		groupId: groups[0].id,
		setVolts: 4.2,
		amps: 2,
		expectedStart: new Date(t0),
		expectedEnd: new Date(t0 + 300 * MINUTE),
		status: 'running',
		actualStart: new Date(t0)
	});
	type Row = typeof readings.$inferInsert;
	const row = (minute: number, groupIndex: number | null, values: Partial<Row>): Row => ({
		sessionId,
		packId: pack.id,
		groupId: groupIndex === null ? null : groups[groupIndex - 1].id,
		takenAt: new Date(t0 + minute * MINUTE),
		source: 'hand',
		clientId: randomUUID(),
		...values
	});
	const rows: Row[] = [
		// Group 1 on the running step: ten readings, all needed for the re-estimate.
		...Array.from({ length: 10 }, (_, i) => row(10 + i * 10, 1, { volts: 4 + i / 100, amps: 2, stepId })),
		// Group 2: five readings with volts; a temperature only in the oldest; a room temperature in the second.
		row(10, 2, { volts: 3.9, tempC: 24 }),
		row(20, 2, { volts: 3.91, ambientC: 19 }),
		row(30, 2, { volts: 3.92 }),
		row(40, 2, { volts: 3.93 }),
		row(50, 2, { volts: 3.94 }),
		// Group 3: volts long ago, then temperatures only.
		row(5, 3, { volts: 3.8 }),
		row(6, 3, { volts: 3.81 }),
		row(7, 3, { volts: 3.82 }),
		row(60, 3, { tempC: 25 }),
		row(70, 3, { tempC: 26 }),
		// The whole pack: three readings.
		row(80, null, { volts: 11.7 }),
		row(90, null, { volts: 11.8 }),
		row(100, null, { volts: 11.9 })
	];
	await db.insert(readings).values(rows);

	const got = await loadRunReadings(sessionId, [stepId]);
	const minutes = (groupIndex: number | null) =>
		got
			.filter((r) => r.groupId === (groupIndex === null ? null : groups[groupIndex - 1].id))
			.map((r) => (r.takenAt.getTime() - t0) / MINUTE)
			.sort((a, b) => a - b);
	expect(minutes(1)).toEqual([10, 20, 30, 40, 50, 60, 70, 80, 90, 100]);
	// Newest two (50, 40), the newest with a temperature (10), the newest room temperature (20).
	expect(minutes(2)).toEqual([10, 20, 40, 50]);
	// Newest two (70, 60, temperatures only) and the newest two with volts (7, 6).
	expect(minutes(3)).toEqual([6, 7, 60, 70]);
	expect(minutes(null)).toEqual([90, 100]);
	const latest2 = got.find((r) => r.groupId === groups[1].id && (r.takenAt.getTime() - t0) / MINUTE === 50)!;
	expect(latest2).toMatchObject({ volts: 3.94, amps: null, tempC: null, stepId: null });
	expect(typeof latest2.id).toBe('number');

	// Without a running step only the newest ones of group 1 are read.
	expect((await loadRunReadings(sessionId, [])).filter((r) => r.groupId === groups[0].id)).toHaveLength(2);
});
