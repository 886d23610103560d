/**
 * Charge sessions' core against a real PostgreSQL: the plan saved is the server's, who may do
 * what, the state machine under concurrent requests, the audit trail, and a pack that keeps its
 * shape once it has sessions.
 */
import { and, asc, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { chargerSchema } from '$lib/schemas/chargers';
import { computeSessionPlan } from '$lib/session-plan';
import type { Member } from '$lib/server/auth/permissions';
import { createCharger } from '$lib/server/chargers';
import { createCellSpec } from '$lib/server/cell-specs';
import { db } from '$lib/server/db';
import { auditEvents, cells, chargeSessions, packs, readings, sessionSteps } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { inputProblem } from '$lib/server/input-problems';
import { createPack, listGroups } from '$lib/server/packs';
import { getSession, listSessions, loadPlanContext, startSession } from '$lib/server/sessions/core';
import * as sessionsApi from '../../src/routes/api/w/[workshop=slug]/sessions/+server';
import * as sessionApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/+server';
import * as statusApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/status/+server';
import * as stepApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/steps/[stepId=id]/+server';
import * as watchApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/watch/+server';
import * as packApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/+server';
import { apiEvent, joinAs, packFixture } from './helpers';

type Ev = Parameters<typeof sessionsApi.POST>[0];
type Body = Record<string, unknown>;

const HOUR = 3_600_000;
const MINUTE = 60_000;

let owner: Member;
let builder: Member;
let tech: Member;
let tech2: Member;
let viewer: Member;
let specId: string;
let chargerId: string;
let ws: string;

beforeAll(async () => {
	const fixture = await packFixture({ series: 2, parallel: 1, capacityAh: 4 });
	owner = fixture.owner;
	specId = fixture.spec.id;
	ws = owner.workshop.slug;
	[builder, tech, tech2, viewer] = await Promise.all([
		joinAs(owner, 'builder'),
		joinAs(owner, 'technician'),
		joinAs(owner, 'technician'),
		joinAs(owner, 'viewer')
	]);
	// A 30 V, 2 A bench supply: below the cells' 4 A charge rating, so 2 A is what a group gets.
	const charger = await createCharger(
		owner,
		chargerSchema.parse({ name: 'Bench supply 30 V 2 A', kind: 'bench-supply', channels: [{ maxVolts: 30, maxAmps: 2 }] })
	);
	if (!charger.ok) throw new Error(charger.message);
	chargerId = charger.charger.id;
});

/** A new 2S1P pack of the fixture's NMC spec (4 Ah, 4 A charge rating) with its group ids. */
async function newPack(packOwnerId = '') {
	const made = await createPack(owner, {
		name: `Pack ${Math.random().toString(36).slice(2, 8)}`,
		cellSpecId: specId,
		series: 2,
		parallel: 1,
		bmsFitted: false,
		bmsBalanceAmps: null,
		status: 'building',
		packOwnerId,
		measuredPeakAmps: null,
		measuredPeakNote: '',
		notes: ''
	});
	if (!made.ok) throw new Error(made.message);
	const groups = await listGroups(made.pack.id);
	return { pack: made.pack, groups, startVolts: { [groups[0].id]: 3.7, [groups[1].id]: 3.8 } };
}

function planBody(p: Awaited<ReturnType<typeof newPack>>, extra: Body = {}): Body {
	return {
		packId: p.pack.id,
		kind: 'one-at-a-time',
		target: 'full',
		chargerId,
		// A wall time in the workshop's zone (Europe/Berlin: UTC+1 in December).
		plannedStart: '2026-12-03T21:00',
		swapMinutes: 5,
		startVolts: p.startVolts,
		...extra
	};
}

const base = () => `/api/w/${ws}/sessions`;

async function post(who: Member, body: Body) {
	return sessionsApi.POST(apiEvent<Ev>(who, base(), { workshop: ws }, { method: 'POST', body }));
}

async function created(who: Member, body: Body) {
	const res = await post(who, body);
	if (res.status !== 201) throw new Error(`create answered ${res.status}: ${await res.text()}`);
	return ((await res.json()) as { session: { id: string } }).session.id;
}

async function status(who: Member, sessionId: string, body: Body) {
	return statusApi.POST(apiEvent(who, `${base()}/${sessionId}/status`, { workshop: ws, sessionId }, { method: 'POST', body }));
}

async function step(who: Member, sessionId: string, stepId: string, action: string) {
	return stepApi.POST(apiEvent(who, `${base()}/${sessionId}/steps/${stepId}`, { workshop: ws, sessionId, stepId }, { method: 'POST', body: { action } }));
}

async function savedSteps(sessionId: string) {
	return db.select().from(sessionSteps).where(eq(sessionSteps.sessionId, sessionId)).orderBy(asc(sessionSteps.position));
}

async function auditOf(sessionId: string) {
	return db.select().from(auditEvents).where(eq(auditEvents.sessionId, sessionId)).orderBy(asc(auditEvents.id));
}

describe('charge sessions: the core', () => {
	it('saves the plan the server computes, reading the start in the workshop’s zone and ignoring step times sent by the client', async () => {
		const p = await newPack();
		const tampered = planBody(p, {
			steps: [{ position: 1, expectedStart: '2000-01-01T00:00:00Z', expectedEnd: '2000-01-01T00:01:00Z' }],
			plannedEnd: '2000-01-01T00:02:00Z'
		});
		const id = await created(builder, tampered);
		const steps = await savedSteps(id);
		const [session] = await db.select().from(chargeSessions).where(eq(chargeSessions.id, id));

		// Worked by hand: 21:00 in Berlin on 3 December (CET, UTC+1) is 20:00 UTC; group 1 starts
		// then, group 2 after group 1's end plus the 5-minute lead swap; each gets the supply's 2 A
		// (below the cells' 4 A rating) at 4.2 V (NMC full, one group on the supply).
		expect(steps).toHaveLength(2);
		expect(steps[0].expectedStart.toISOString()).toBe('2026-12-03T20:00:00.000Z');
		expect(steps[1].expectedStart.getTime() - steps[0].expectedEnd.getTime()).toBe(5 * MINUTE);
		expect(steps.map((s) => [s.groupId, s.amps, s.setVolts])).toEqual([
			[p.groups[0].id, 2, 4.2],
			[p.groups[1].id, 2, 4.2]
		]);
		expect(session.plannedEnd?.getTime()).toBe(steps[1].expectedEnd.getTime());
		expect(session.status).toBe('planned');
		expect(steps.every((s) => s.expectedStart.getUTCFullYear() === 2026)).toBe(true);

		// The same input through the plan hub gives exactly the saved steps.
		const ctx = await loadPlanContext(builder, p.pack.id);
		const plan = computeSessionPlan(
			ctx.pack,
			ctx.chargers,
			{
				kind: 'one-at-a-time',
				target: 'full',
				chargerId,
				channelIds: [],
				swapMinutes: 5,
				plannedStart: new Date('2026-12-03T20:00:00Z'),
				handsOn: { daily: [], once: [] },
				startVolts: p.startVolts
			},
			'Europe/Berlin'
		);
		if (!plan.ok) throw new Error(plan.message);
		expect(steps.map((s) => [s.expectedStart.getTime(), s.expectedEnd.getTime(), s.ccHours, s.cvHours, s.ah])).toEqual(
			plan.steps.map((s) => [s.expectedStart.getTime(), s.expectedEnd.getTime(), s.ccHours, s.cvHours, s.ah])
		);
		const audit = await auditOf(id);
		expect(audit.map((a) => a.kind)).toEqual(['session.create']);
		expect(audit[0].actorId).toBe(builder.user.id);
	});

	it('lets any technician pause, resume and stop (with a reason, audited), and keeps a viewer out', async () => {
		const p = await newPack();
		const id = await created(builder, planBody(p));
		const params = { workshop: ws, sessionId: id };

		// A viewer who does not own the pack does not learn the session exists; they never change it.
		await expect(sessionApi.GET(apiEvent(viewer, `${base()}/${id}`, params))).rejects.toMatchObject({ status: 404 });
		await expect(status(viewer, id, { action: 'pause' })).rejects.toMatchObject({
			status: 403,
			body: { message: 'A viewer cannot run sessions (pause, stop, steps or the watch) in this workshop.' }
		});
		expect((await listSessions(viewer)).some((s) => s.id === id)).toBe(false);

		// A technician runs sessions but does not start them; the builder does.
		await expect(status(tech, id, { action: 'start' })).rejects.toMatchObject({
			status: 403,
			body: { message: 'A technician cannot plan or start sessions in this workshop.' }
		});
		expect((await status(builder, id, { action: 'start' })).status).toBe(200);
		await expect(status(viewer, id, { action: 'stop', reason: 'smoke' })).rejects.toMatchObject({ status: 403 });

		expect((await status(tech, id, { action: 'pause' })).status).toBe(200);
		const paused = await status(tech2, id, { action: 'pause' });
		expect(paused.status).toBe(409);
		expect(((await paused.json()) as { message: string }).message).toMatch(/already paused/);
		expect((await status(tech2, id, { action: 'resume' })).status).toBe(200);
		const noReason = await status(tech, id, { action: 'stop' });
		expect(noReason.status).toBe(400);
		const stopped = await status(tech, id, { action: 'stop', reason: 'Group 2 feels warm; checking the busbar.' });
		expect(stopped.status).toBe(200);

		const [row] = await db.select().from(chargeSessions).where(eq(chargeSessions.id, id));
		expect(row).toMatchObject({ status: 'stopped', stopReason: 'Group 2 feels warm; checking the busbar.' });
		expect(row.endedAt).toBeInstanceOf(Date);
		const audit = await auditOf(id);
		expect(audit.map((a) => [a.kind, a.actorId, a.before?.status ?? null, a.after?.status ?? null])).toEqual([
			['session.create', builder.user.id, null, 'planned'],
			['session.start', builder.user.id, 'planned', 'running'],
			['session.pause', tech.user.id, 'running', 'paused'],
			['session.resume', tech2.user.id, 'paused', 'running'],
			['session.stop', tech.user.id, 'running', 'stopped']
		]);
		expect(audit[4].after).toMatchObject({ reason: 'Group 2 feels warm; checking the busbar.' });
		expect((await status(tech, id, { action: 'resume' })).status).toBe(409);

		// The pack's owner, a viewer, reads their own pack's session, read-only.
		const mine = await newPack(viewer.user.id);
		const own = await created(builder, planBody(mine));
		const detail = await getSession(viewer, own);
		expect(detail.permissions).toEqual({ canPlan: false, canRun: false, canLog: false });
		expect(detail.steps).toHaveLength(2);
		expect((await listSessions(viewer)).map((s) => s.id)).toEqual([own]);
	});

	it('runs steps one per channel, asks for the rest reading 2 h after a step ends, ends the session after the last step, and records a watch hand-over', async () => {
		const p = await newPack();
		const id = await created(owner, planBody(p, { watchUserId: tech.user.id }));
		const [first, second] = await savedSteps(id);
		expect((await step(tech, id, first.id, 'start')).status).toBe(409); // not started yet
		await startSession(owner, id);

		expect((await step(tech, id, first.id, 'start')).status).toBe(200);
		// The list: the running session first; its expected end moves with the step's early start.
		const later = await created(owner, planBody(p, { plannedStart: '2026-12-10T21:00' }));
		const listed = await listSessions(owner, { packId: p.pack.id });
		expect(listed.map((l) => [l.id, l.status, l.stepsTotal, l.stepsEnded])).toEqual([
			[id, 'running', 2, 0],
			[later, 'planned', 2, 0]
		]);
		const [started] = await savedSteps(id);
		const early = started.actualStart!.getTime() - started.expectedStart.getTime();
		expect(Math.abs(listed[0].expectedEnd!.getTime() - (listed[0].plannedEnd!.getTime() + early))).toBeLessThan(1000);
		expect(listed[1].expectedEnd).toEqual(listed[1].plannedEnd);
		const busy = await step(tech, id, second.id, 'start');
		expect(busy.status).toBe(409);
		expect(((await busy.json()) as { message: string }).message).toMatch(/Bench supply 30 V 2 A is still on group 1/);
		const done = await step(tech, id, first.id, 'done');
		expect(done.status).toBe(200);
		const [ended] = await savedSteps(id);
		expect(ended.status).toBe('done');
		// TI SLVUDW8's test procedure: read the rest voltage 2 h after a charge.
		expect(ended.restReadingDueAt!.getTime() - ended.actualEnd!.getTime()).toBe(2 * HOUR);

		// The watch goes to another technician: one call, recorded with who had it before.
		const handed = await watchApi.POST(
			apiEvent(tech, `${base()}/${id}/watch`, { workshop: ws, sessionId: id }, { method: 'POST', body: { userId: tech2.user.id } })
		);
		expect(handed.status).toBe(200);
		const toViewer = await watchApi.POST(
			apiEvent(tech, `${base()}/${id}/watch`, { workshop: ws, sessionId: id }, { method: 'POST', body: { userId: viewer.user.id } })
		);
		expect(toViewer.status).toBe(400);
		expect((await getSession(tech, id)).watch).toEqual({ id: tech2.user.id, name: tech2.user.name });

		expect((await step(tech2, id, second.id, 'start')).status).toBe(200);
		expect((await step(tech2, id, second.id, 'done')).status).toBe(200);
		const [row] = await db.select().from(chargeSessions).where(eq(chargeSessions.id, id));
		expect(row.status).toBe('done');
		const audit = await auditOf(id);
		const handover = audit.find((a) => a.kind === 'watch.handover');
		expect(handover).toMatchObject({
			actorId: tech.user.id,
			before: { watchUserId: tech.user.id, watchName: tech.user.name },
			after: { watchUserId: tech2.user.id, watchName: tech2.user.name }
		});
		expect(audit.map((a) => a.kind).slice(-3)).toEqual(['step.start', 'step.done', 'session.done']);
	});

	it('answers 401 signed out, 415 for a body that is not JSON, 400 for control characters, and writes nothing', async () => {
		const p = await newPack();
		const id = await created(builder, planBody(p));
		await expect(sessionsApi.GET(apiEvent(null, base(), { workshop: ws }))).rejects.toMatchObject({ status: 401 });
		await expect(status(null as unknown as Member, id, { action: 'pause' })).rejects.toMatchObject({ status: 401 });
		const url = `http://127.0.0.1${base()}/${id}/status`;
		const asText = {
			...apiEvent<Parameters<typeof statusApi.POST>[0]>(owner, url, { workshop: ws, sessionId: id }),
			request: new Request(url, { method: 'POST', body: '{"action":"start"}', headers: { 'content-type': 'text/plain' } })
		};
		expect((await statusApi.POST(asText)).status).toBe(415);
		expect((await status(builder, id, { action: 'start' })).status).toBe(200);
		const nul = await status(tech, id, { action: 'stop', reason: 'hot\u0000' });
		expect(nul.status).toBe(400);
		expect((await post(builder, planBody(p, { name: 'Night\u0007' }))).status).toBe(400);
		const [row] = await db.select().from(chargeSessions).where(eq(chargeSessions.id, id));
		expect(row.status).toBe('running');
		expect(await db.select().from(chargeSessions).where(eq(chargeSessions.packId, p.pack.id))).toHaveLength(1);
	});

	it('starts a session once when two start it at the same moment', async () => {
		const p = await newPack();
		const id = await created(builder, planBody(p));
		const results = await Promise.all([startSession(owner, id), startSession(builder, id)]);
		expect(results.filter((r) => r.ok)).toHaveLength(1);
		const refused = results.find((r) => !r.ok);
		expect(refused).toMatchObject({ ok: false, status: 409 });
		expect((await auditOf(id)).filter((a) => a.kind === 'session.start')).toHaveLength(1);
	});

	it('tightens limits freely; loosening one past the default needs the datasheet value named; foreign equipment is refused', async () => {
		const p = await newPack();
		// NMC's over-voltage act-now limit defaults to 4.20 V + 50 mV = 4.25 V per cell (BU-409 tolerance).
		const loose = await post(builder, planBody(p, { limits: { overVoltsCritical: 4.3 } }));
		expect(loose.status).toBe(400);
		const body = (await loose.json()) as { message: string; errors: { path: string }[] };
		expect(body.message).toMatch(/over-voltage act-now limit of 4\.3 V .* default of 4\.25 V/);
		expect(body.errors[0].path).toBe('limits.overVoltsCritical');
		expect(await db.select().from(chargeSessions).where(eq(chargeSessions.packId, p.pack.id))).toHaveLength(0);

		// Equipment that is not this workshop's is named, not planned around.
		for (const [change, path] of [
			[{ chargerId: 'b'.repeat(24) }, 'chargerId'],
			[{ channelIds: ['c'.repeat(24)] }, 'channelIds'],
			[{ kind: 'bulk-top-up', topUpChannelId: 'd'.repeat(24) }, 'topUpChannelId']
		] as const) {
			const res = await post(builder, planBody(p, change));
			expect(res.status).toBe(400);
			expect(((await res.json()) as { errors: { path: string }[] }).errors[0].path).toBe(path);
		}

		const tight = await created(builder, planBody(p, { limits: { overVoltsCritical: 4.22, tempWarningC: 40 } }));
		const confirmed = await created(
			builder,
			planBody(p, { limits: { overVoltsCritical: 4.3 }, limitsConfirmation: 'Cell datasheet, section 4: charge cut-off 4,30 V' })
		);
		const rows = await db.select().from(chargeSessions).where(eq(chargeSessions.packId, p.pack.id));
		const limitsOf = (sid: string) => rows.find((r) => r.id === sid)!.limits;
		expect(limitsOf(tight)).toMatchObject({ overVoltsCritical: 4.22, tempWarningC: 40, overVoltsWarning: 4.22 });
		expect(limitsOf(confirmed)).toMatchObject({ overVoltsCritical: 4.3 });
	});

	it('PATCH changes only the keys sent and plans again', async () => {
		const p = await newPack();
		const id = await created(
			builder,
			planBody(p, { name: 'Night top-up', swapMinutes: 10, readingIntervalMinutes: 30, handsOn: { daily: [{ from: '07:00', to: '23:00' }], once: [] } })
		);
		const before = await savedSteps(id);
		const patch = (body: Body) =>
			sessionApi.PATCH(apiEvent(builder, `${base()}/${id}`, { workshop: ws, sessionId: id }, { method: 'PATCH', body }));

		expect((await patch({ name: 'Trike top balance' })).status).toBe(200);
		const [renamed] = await db.select().from(chargeSessions).where(eq(chargeSessions.id, id));
		expect(renamed).toMatchObject({
			name: 'Trike top balance',
			swapMinutes: 10,
			readingIntervalMinutes: 30,
			handsOn: { daily: [{ from: '07:00', to: '23:00' }], once: [] },
			chargerId
		});
		expect((await savedSteps(id)).map((s) => s.expectedStart.getTime())).toEqual(before.map((s) => s.expectedStart.getTime()));

		expect((await patch({ swapMinutes: 20 })).status).toBe(200);
		const after = await savedSteps(id);
		expect(after[0].expectedStart.getTime()).toBe(before[0].expectedStart.getTime());
		// Group 2 cannot start before the swap is over: 20 minutes at the least (later if nobody is there).
		expect(after[1].expectedStart.getTime() - after[0].expectedEnd.getTime()).toBeGreaterThanOrEqual(20 * MINUTE);
		const [renamedStill] = await db.select().from(chargeSessions).where(eq(chargeSessions.id, id));
		expect(renamedStill.name).toBe('Trike top balance');

		const update = (await auditOf(id)).filter((a) => a.kind === 'session.update');
		expect(update[0]).toMatchObject({ before: { name: 'Night top-up' }, after: { name: 'Trike top balance' } });
		expect(update[1]).toMatchObject({ before: { swapMinutes: 10 }, after: { swapMinutes: 20 } });

		await startSession(builder, id);
		expect((await patch({ name: 'Too late' })).status).toBe(409);
	});

	it('starts each group from its newest reading (a whole-pack reading ÷ S counts), else its cells’ mean arrival volts', async () => {
		const p = await newPack();
		const [g1, g2] = p.groups;
		const cell = (label: string, volts: number, groupId: string) => ({
			id: newId(),
			packId: p.pack.id,
			label: `${label}-${p.pack.id.slice(0, 6)}`,
			arrivalVolts: volts,
			placement: 'group' as const,
			groupId
		});
		await db.insert(cells).values([cell('aa', 3.6, g1.id), cell('ab', 3.7, g1.id), cell('ba', 3.8, g2.id), cell('bb', 3.9, g2.id)]);
		let ctx = await loadPlanContext(builder, p.pack.id);
		// Means worked by hand: (3.60 + 3.70) / 2 and (3.80 + 3.90) / 2.
		expect(ctx.startVolts).toEqual({ [g1.id]: 3.65, [g2.id]: 3.85 });
		expect(ctx.startVoltsSource).toEqual({ [g1.id]: 'cells', [g2.id]: 'cells' });

		const id = await created(builder, planBody(p));
		const at = (minutes: number) => new Date(Date.UTC(2026, 11, 3, 20, minutes));
		const reading = (clientId: string, groupId: string | null, volts: number, takenAt: Date) => ({
			sessionId: id, packId: p.pack.id, groupId, volts, takenAt, source: 'hand' as const, clientId, enteredBy: tech.user.id
		});
		await db.insert(readings).values([reading('r1', g1.id, 3.71, at(0)), reading('r2', null, 7.6, at(10)), reading('r3', g2.id, 3.95, at(20))]);
		ctx = await loadPlanContext(builder, p.pack.id);
		// Group 1: the pack's 7.60 V at 20:10 is newer than its own 3.71 V at 20:00 → 7.60 / 2 = 3.80.
		// Group 2: its own 3.95 V at 20:20 is the newest.
		expect(ctx.startVolts).toEqual({ [g1.id]: 3.8, [g2.id]: 3.95 });
		expect(ctx.startVoltsSource).toEqual({ [g1.id]: 'last-reading', [g2.id]: 'last-reading' });
		expect(ctx.members.map((m) => m.role).sort()).toEqual(['builder', 'owner', 'technician', 'technician']);
	});

	it('keeps the shape of a pack with sessions (409) and never deletes its readings', async () => {
		const p = await newPack();
		const id = await created(builder, planBody(p));
		await db.insert(readings).values({
			sessionId: id,
			packId: p.pack.id,
			groupId: p.groups[0].id,
			takenAt: new Date(),
			volts: 3.71,
			source: 'hand',
			clientId: 'shape-check-1',
			enteredBy: tech.user.id
		});
		const params = { workshop: ws, packId: p.pack.id };
		const patchPack = (body: Body) => packApi.PATCH(apiEvent(owner, `/api/w/${ws}/packs/${p.pack.id}`, params, { method: 'PATCH', body }));

		const other = await createCellSpec(owner, {
			name: `Other spec ${Math.random().toString(36).slice(2, 8)}`,
			chemistry: 'builtin:lfp',
			capacityAh: 3,
			maxContinuousAmps: 10,
			maxBurstAmps: null,
			maxChargeAmps: 3,
			resistanceMilliOhms: null
		});
		if (!other.ok) throw new Error(other.message);
		for (const change of [{ series: 3 }, { series: 1 }, { parallel: 2 }, { cellSpecId: other.spec.id }]) {
			const refused = await patchPack(change);
			expect(refused.status).toBe(409);
			expect(await refused.json()).toMatchObject({ reason: 'keeps-shape', message: expect.stringMatching(/charge sessions/) });
		}
		expect((await patchPack({ name: 'Renamed pack' })).status).toBe(200);

		// The database refuses the same change on any other path, answered as a 409 too.
		const direct = await db
			.update(packs)
			.set({ series: 3 })
			.where(eq(packs.id, p.pack.id))
			.then(
				() => null,
				(e: unknown) => e
			);
		expect(inputProblem(direct)).toMatchObject({ status: 409, message: expect.stringMatching(/charge sessions/) });

		const [pack] = await db.select().from(packs).where(eq(packs.id, p.pack.id));
		expect([pack.series, pack.parallel, pack.cellSpecId, pack.name]).toEqual([2, 1, specId, 'Renamed pack']);
		expect(await listGroups(p.pack.id)).toHaveLength(2);
		expect(await db.select().from(readings).where(and(eq(readings.sessionId, id), eq(readings.clientId, 'shape-check-1')))).toHaveLength(1);
	});
});
