import { and, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { db, sqlClient } from '$lib/server/db';
import { SESSION_EVENTS_CHANNEL } from '$lib/server/sessions/notify';
import { auditEvents, chargeSessions, readings, sessionSteps } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { readingInputSchema } from '$lib/schemas/readings';
import { editReading, logReadings } from '$lib/server/sessions/readings';
import * as readingsApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/readings/+server';
import * as readingApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/readings/[readingId=num]/+server';
import { apiEvent, joinAs } from './helpers';
import { sessionFixture } from './readings-fixture';

type PostEvent = Parameters<typeof readingsApi.POST>[0];
type Answer = { stored: number; duplicates: number; readings: { clientId: string; id: number; duplicate: boolean }[] };
type Problem = { message: string; errors?: { index?: number; clientId?: string; message: string }[] };

const minutesAgo = (m: number) => new Date(Date.now() - m * 60_000).toISOString();

async function countReadings(sessionId: string) {
	return (await db.select({ id: readings.id }).from(readings).where(eq(readings.sessionId, sessionId))).length;
}

describe('logging readings', () => {
	it('stores a reading posted twice with the same clientId once, also when both posts race', async () => {
		const { owner, session, ws, steps, groups } = await sessionFixture();
		const params = { workshop: ws, sessionId: session.id };
		const path = `/api/w/${ws}/sessions/${session.id}/readings`;
		const batch = {
			readings: [
				{ clientId: 'phone-a-1', groupIndex: 1, takenAt: minutesAgo(10), volts: 3.912, tempC: 24.5 },
				{ clientId: 'phone-a-2', groupIndex: null, takenAt: minutesAgo(10), volts: 15.2, note: 'whole pack' }
			]
		};
		const first = await readingsApi.POST(apiEvent<PostEvent>(owner, path, params, { method: 'POST', body: batch }));
		expect(first.status).toBe(201);
		const stored = (await first.json()) as Answer;
		expect(stored).toMatchObject({ stored: 2, duplicates: 0 });

		const again = await readingsApi.POST(apiEvent<PostEvent>(owner, path, params, { method: 'POST', body: batch }));
		expect(again.status).toBe(200);
		const repeat = (await again.json()) as Answer;
		expect(repeat).toMatchObject({ stored: 0, duplicates: 2 });
		// The answer names the ids stored the first time.
		expect(repeat.readings.map((r) => r.id)).toEqual(stored.readings.map((r) => r.id));
		expect(repeat.readings.every((r) => r.duplicate)).toBe(true);
		expect(await countReadings(session.id)).toBe(2);

		// Two posts of a new batch at the same moment: one stores it, the other finds duplicates.
		const race = { readings: [{ clientId: 'phone-a-3', groupIndex: 2, takenAt: minutesAgo(5), volts: 3.8 }] };
		const answers = await Promise.all(
			[0, 1, 2].map(() => readingsApi.POST(apiEvent<PostEvent>(owner, path, params, { method: 'POST', body: race })))
		);
		const bodies = (await Promise.all(answers.map((a) => a.json()))) as Answer[];
		expect(bodies.map((b) => b.stored).sort()).toEqual([0, 0, 1]);
		expect(new Set(bodies.map((b) => b.readings[0].id)).size).toBe(1);
		expect(await countReadings(session.id)).toBe(3);

		// Group 1's reading went to group 1's running step; the whole-pack one found no whole-pack step.
		const rows = await db.select().from(readings).where(eq(readings.sessionId, session.id));
		const byClient = new Map(rows.map((r) => [r.clientId, r]));
		expect(byClient.get('phone-a-1')).toMatchObject({ stepId: steps[0].id, groupId: groups[0].id, source: 'hand', enteredBy: owner.user.id });
		expect(byClient.get('phone-a-2')).toMatchObject({ stepId: null, groupId: null, volts: 15.2, note: 'whole pack' });
		// Group 2's step has not started: its reading belongs to no step.
		expect(byClient.get('phone-a-3')?.stepId).toBeNull();
	});

	it('stores none of a batch with one invalid reading, and names it', async () => {
		const { owner, session, ws } = await sessionFixture({ series: 4 });
		const params = { workshop: ws, sessionId: session.id };
		const path = `/api/w/${ws}/sessions/${session.id}/readings`;
		const good = (i: number) => ({ clientId: `ok-${i}`, groupIndex: 1 + (i % 4), takenAt: minutesAgo(30 - i), volts: 3.7 });
		// Schema problem: 7.3 V is no volts per cell.
		const bad = await readingsApi.POST(
			apiEvent<PostEvent>(owner, path, params, {
				method: 'POST',
				body: { readings: [good(0), good(1), { clientId: 'typo', groupIndex: 2, takenAt: minutesAgo(1), volts: 7.3 }, good(2)] }
			})
		);
		expect(bad.status).toBe(400);
		const problem = (await bad.json()) as Problem;
		expect(problem.errors).toHaveLength(1);
		expect(problem.errors?.[0]).toMatchObject({ index: 2, clientId: 'typo' });
		expect(problem.errors?.[0].message).toMatch(/volts per cell/);

		// Pack problem: group 5 of a 4S pack, and 24 V on a 4S pack (at most 20 V).
		const beyond = await readingsApi.POST(
			apiEvent<PostEvent>(owner, path, params, {
				method: 'POST',
				body: {
					readings: [
						good(0),
						{ clientId: 'g5', groupIndex: 5, takenAt: minutesAgo(2), volts: 3.6 },
						{ clientId: 'pack24', groupIndex: null, takenAt: minutesAgo(2), volts: 24 }
					]
				}
			})
		);
		expect(beyond.status).toBe(400);
		const named = (await beyond.json()) as Problem;
		expect(named.errors?.map((e) => [e.index, e.clientId])).toEqual([
			[1, 'g5'],
			[2, 'pack24']
		]);
		expect(named.errors?.[0].message).toContain('groups 1 to 4');
		expect(await countReadings(session.id)).toBe(0);
	});

	it('refuses NUL in a note (400), a body that is not JSON (415), a time in the future, and an empty reading', async () => {
		const { owner, session, ws } = await sessionFixture();
		const params = { workshop: ws, sessionId: session.id };
		const path = `/api/w/${ws}/sessions/${session.id}/readings`;
		const post = (body: unknown) => readingsApi.POST(apiEvent<PostEvent>(owner, path, params, { method: 'POST', body }));

		const nul = await post({ readings: [{ clientId: 'n1', groupIndex: 1, takenAt: minutesAgo(1), volts: 3.7, note: 'a\u0000b' }] });
		expect(nul.status).toBe(400);
		expect(((await nul.json()) as Problem).errors?.[0].message).toMatch(/control characters/);

		const form = apiEvent<PostEvent>(owner, path, params, { method: 'POST', body: 'readings=1' });
		const asForm = new Request(form.request.url, { method: 'POST', body: 'readings=1', headers: { 'content-type': 'application/x-www-form-urlencoded' } });
		const wrongType = await readingsApi.POST({ ...form, request: asForm } as PostEvent);
		expect(wrongType.status).toBe(415);

		const future = await post({ readings: [{ clientId: 'f1', groupIndex: 1, takenAt: new Date(Date.now() + 3_600_000).toISOString(), volts: 3.7 }] });
		expect(future.status).toBe(400);
		expect(((await future.json()) as Problem).errors?.[0].message).toMatch(/future/);

		const noOffset = await post({ readings: [{ clientId: 'o1', groupIndex: 1, takenAt: '2026-03-14T21:30:00', volts: 3.7 }] });
		expect(noOffset.status).toBe(400);

		const empty = await post({ readings: [{ clientId: 'e1', groupIndex: 1, takenAt: minutesAgo(1) }] });
		expect(empty.status).toBe(400);
		expect(((await empty.json()) as Problem).errors?.[0].message).toMatch(/at least one value/);
		expect(await countReadings(session.id)).toBe(0);
	});

	it('lets a technician log and a viewer not; refuses a stopped or draft session in words', async () => {
		const { owner, session, ws, pack } = await sessionFixture();
		const params = { workshop: ws, sessionId: session.id };
		const path = `/api/w/${ws}/sessions/${session.id}/readings`;
		const body = (id: string) => ({ readings: [{ clientId: id, groupIndex: 1, takenAt: minutesAgo(1), volts: 3.71 }] });

		const tech = await joinAs(owner, 'technician');
		const logged = await readingsApi.POST(apiEvent<PostEvent>(tech, path, params, { method: 'POST', body: body('t1') }));
		expect(logged.status).toBe(201);

		const viewer = await joinAs(owner, 'viewer');
		await expect(readingsApi.POST(apiEvent<PostEvent>(viewer, path, params, { method: 'POST', body: body('v1') }))).rejects.toMatchObject({
			status: 403
		});
		await expect(readingsApi.POST(apiEvent<PostEvent>(null, path, params, { method: 'POST', body: body('x1') }))).rejects.toMatchObject({
			status: 401
		});

		await db.update(chargeSessions).set({ status: 'stopped', stopReason: 'Group 3 ran warm' }).where(eq(chargeSessions.id, session.id));
		const stopped = await readingsApi.POST(apiEvent<PostEvent>(tech, path, params, { method: 'POST', body: body('t2') }));
		expect(stopped.status).toBe(409);
		expect(((await stopped.json()) as Problem).message).toMatch(/stopped/);

		await db.update(chargeSessions).set({ status: 'draft', stopReason: '' }).where(eq(chargeSessions.id, session.id));
		const draft = await readingsApi.POST(apiEvent<PostEvent>(tech, path, params, { method: 'POST', body: body('t2') }));
		expect(draft.status).toBe(409);
		expect(((await draft.json()) as Problem).message).toMatch(/draft/);

		await db.update(chargeSessions).set({ status: 'done' }).where(eq(chargeSessions.id, session.id));
		const late = await readingsApi.POST(apiEvent<PostEvent>(tech, path, params, { method: 'POST', body: body('t3') }));
		expect(late.status).toBe(201);
		expect(await countReadings(session.id)).toBe(2);

		// The viewer owns no pack here: the session is not theirs to read either.
		await expect(readingsApi.GET(apiEvent(viewer, path, params))).resolves.toMatchObject({ status: 404 });
		expect(pack.id).toBeTruthy();
	});

	it('keeps the original of an edited reading in the audit trail and marks the reading edited', async () => {
		const { owner, session, ws } = await sessionFixture();
		const params = { workshop: ws, sessionId: session.id };
		const path = `/api/w/${ws}/sessions/${session.id}/readings`;
		const tech = await joinAs(owner, 'technician');
		const posted = await readingsApi.POST(
			apiEvent<PostEvent>(tech, path, params, {
				method: 'POST',
				body: { readings: [{ clientId: 'edit-1', groupIndex: 3, takenAt: minutesAgo(3), volts: 3.19, tempC: 22 }] }
			})
		);
		const id = ((await posted.json()) as Answer).readings[0].id;
		const edit = await readingApi.PATCH(
			apiEvent(tech, `${path}/${id}`, { ...params, readingId: String(id) }, { method: 'PATCH', body: { volts: 3.91 } })
		);
		expect(edit.status).toBe(200);
		const { reading } = (await edit.json()) as { reading: { volts: number; tempC: number; editedAt: string | null } };
		// Only volts changed; the temperature sent before stays.
		expect(reading).toMatchObject({ volts: 3.91, tempC: 22 });
		expect(reading.editedAt).not.toBeNull();

		const trail = await db
			.select()
			.from(auditEvents)
			.where(and(eq(auditEvents.subjectType, 'reading'), eq(auditEvents.subjectId, String(id))));
		expect(trail).toHaveLength(1);
		expect(trail[0]).toMatchObject({ kind: 'reading.edit', actorId: tech.user.id, sessionId: session.id, before: { volts: 3.19 }, after: { volts: 3.91 } });
		const [row] = await db.select().from(readings).where(eq(readings.id, id));
		expect(row.editedBy).toBe(tech.user.id);

		// A PATCH that would leave no value, or holds an unknown key, changes nothing.
		const emptied = await readingApi.PATCH(
			apiEvent(tech, `${path}/${id}`, { ...params, readingId: String(id) }, { method: 'PATCH', body: { volts: null, tempC: null } })
		);
		expect(emptied.status).toBe(400);
		const unknownKey = await readingApi.PATCH(
			apiEvent(tech, `${path}/${id}`, { ...params, readingId: String(id) }, { method: 'PATCH', body: { groupIndex: 2 } })
		);
		expect(unknownKey.status).toBe(400);
		const viewer = await joinAs(owner, 'viewer');
		await expect(
			readingApi.PATCH(apiEvent(viewer, `${path}/${id}`, { ...params, readingId: String(id) }, { method: 'PATCH', body: { volts: 3.5 } }))
		).rejects.toMatchObject({ status: 403 });
		const [unchanged] = await db.select().from(readings).where(eq(readings.id, id));
		expect(unchanged.volts).toBe(3.91);
	});

	it('stores a batch of 1000 readings in one request and lists them; a reading clears the due mark', async () => {
		const { owner, session, ws } = await sessionFixture({ series: 4 });
		await db.update(chargeSessions).set({ readingDueAt: new Date() }).where(eq(chargeSessions.id, session.id));
		const params = { workshop: ws, sessionId: session.id };
		const path = `/api/w/${ws}/sessions/${session.id}/readings`;
		const start = Date.now() - 1000 * 30_000;
		const batch = Array.from({ length: 1000 }, (_, i) => ({
			clientId: `bulk-${i}`,
			groupIndex: (i % 4) + 1,
			takenAt: new Date(start + i * 30_000).toISOString(),
			volts: 3.6 + (i % 7) / 100,
			amps: 2
		}));
		const answer = await readingsApi.POST(apiEvent<PostEvent>(owner, path, params, { method: 'POST', body: { readings: batch } }));
		expect(answer.status).toBe(201);
		expect(((await answer.json()) as Answer).stored).toBe(1000);
		expect(await countReadings(session.id)).toBe(1000);
		const [after] = await db.select({ due: chargeSessions.readingDueAt }).from(chargeSessions).where(eq(chargeSessions.id, session.id));
		expect(after.due).toBeNull();

		const listed = await readingsApi.GET(apiEvent(owner, `${path}?limit=10`, params));
		const { readings: last } = (await listed.json()) as { readings: { clientId: string; groupIndex: number }[] };
		expect(last.map((r) => r.clientId)).toEqual(Array.from({ length: 10 }, (_, i) => `bulk-${990 + i}`));
		expect(last[0].groupIndex).toBe((990 % 4) + 1);

		const tooMany = await readingsApi.POST(
			apiEvent<PostEvent>(owner, path, params, { method: 'POST', body: { readings: [...batch, { ...batch[0], clientId: 'bulk-x' }] } })
		);
		expect(tooMany.status).toBe(400);
	});

	it('tells live views once the readings are committed (a NOTIFY with the count and the newest time)', async () => {
		const { owner, session } = await sessionFixture();
		const heard: { sessionId: string; kind: string; count?: number; newest?: string }[] = [];
		const listening = await sqlClient().listen(SESSION_EVENTS_CHANNEL, (payload) => heard.push(JSON.parse(payload)));
		try {
			const inputs = ['2026-01-05T10:00:00+01:00', '2026-01-05T10:30:00+01:00'].map((takenAt, i) =>
				readingInputSchema.parse({ clientId: `live-${i}`, groupIndex: 1, takenAt, volts: 3.8 })
			);
			await logReadings({ kind: 'member', member: owner }, session.id, inputs, 'hand');
			await logReadings({ kind: 'member', member: owner }, session.id, inputs, 'hand');
			for (let i = 0; i < 50 && !heard.some((e) => e.sessionId === session.id); i++) await new Promise((r) => setTimeout(r, 20));
			// One notice for the stored pair; none for the repeat, which stored nothing.
			await new Promise((r) => setTimeout(r, 100));
			expect(heard.filter((e) => e.sessionId === session.id)).toEqual([
				{ sessionId: session.id, workshopId: owner.workshop.id, kind: 'reading', count: 2, newest: '2026-01-05T09:30:00.000Z' }
			]);
		} finally {
			await listening.unlisten();
		}
	});

	it('attaches a reading to the running step of its group first, else to a running whole-pack step', async () => {
		const { owner, session, steps } = await sessionFixture({ series: 4 });
		const [packStep] = await db
			.insert(sessionSteps)
			.values({
				id: newId(),
				sessionId: session.id,
				position: 99,
				groupId: null,
				role: 'top-up',
				expectedStart: new Date(Date.now() - 7_200_000),
				expectedEnd: new Date(Date.now() + 3_600_000),
				actualStart: new Date(Date.now() - 7_200_000),
				status: 'running'
			})
			.returning();
		const inputs = [
			{ clientId: 'own', groupIndex: 1, takenAt: minutesAgo(2), volts: 3.9 },
			{ clientId: 'other', groupIndex: 3, takenAt: minutesAgo(2), volts: 3.9 },
			{ clientId: 'pack', groupIndex: null, takenAt: minutesAgo(2), volts: 15.6 },
			// Before group 1's step began (an hour ago), only the whole-pack step was running.
			{ clientId: 'early', groupIndex: 1, takenAt: minutesAgo(90), volts: 3.8 }
		].map((r) => readingInputSchema.parse(r));
		expect(await logReadings({ kind: 'member', member: owner }, session.id, inputs, 'hand')).toMatchObject({ ok: true, stored: 4 });
		const rows = await db.select().from(readings).where(eq(readings.sessionId, session.id));
		const stepOf = Object.fromEntries(rows.map((r) => [r.clientId, r.stepId]));
		expect(stepOf).toEqual({ own: steps[0].id, other: packStep.id, pack: packStep.id, early: packStep.id });

		// A corrected time moves a reading to the step running then: 'early' to two minutes ago is
		// in group 1's own step; 'own' to three hours ago is before every step began.
		const idOf = Object.fromEntries(rows.map((r) => [r.clientId, r.id]));
		expect(await editReading(owner, session.id, idOf.early, { takenAt: minutesAgo(2) })).toMatchObject({ ok: true });
		expect(await editReading(owner, session.id, idOf.own, { takenAt: minutesAgo(180) })).toMatchObject({ ok: true });
		const moved = await db.select().from(readings).where(eq(readings.sessionId, session.id));
		const movedTo = Object.fromEntries(moved.map((r) => [r.clientId, r.stepId]));
		expect(movedTo).toEqual({ own: null, other: packStep.id, pack: packStep.id, early: steps[0].id });
	});

	it('logReadings takes a member actor directly (the form actions use it)', async () => {
		const { owner, session } = await sessionFixture();
		const input = readingInputSchema.parse({ clientId: 'direct-1', groupIndex: 2, takenAt: '2026-01-05T10:00:00+01:00', ambientC: 18 });
		const result = await logReadings({ kind: 'member', member: owner }, session.id, [input], 'hand');
		expect(result).toMatchObject({ ok: true, stored: 1 });
		const [row] = await db.select().from(readings).where(eq(readings.sessionId, session.id));
		expect(row.takenAt.toISOString()).toBe('2026-01-05T09:00:00.000Z');
	});
});
