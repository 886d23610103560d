// The demo's charge sessions, loaded the way `npm start` loads them: into an empty database. The
// shared test database is not empty, so this file makes a scratch database in the same cluster,
// migrates it, loads the demo, checks it and drops it.
import { randomUUID } from 'node:crypto';
import { and, asc, eq, isNull, sql } from 'drizzle-orm';
import postgres from 'postgres';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, db } from '$lib/server/db';
import { alertDeliveries, alerts, auditEvents, chargeSessions, packGroups, packs, readings, sessionSteps, users } from '$lib/server/db/schema';
import { loadDemoIfEmpty } from '$lib/server/demo';
import { rereadServerEnv } from '$lib/server/env';
import { runReadingClock } from '$lib/server/jobs/reading-clock';
import type { SessionListItem } from '$lib/server/sessions/core';
import { applyMigrations } from '$lib/server/migrate';
import { load as loadSessionsPage } from '../../src/routes/(app)/w/[workshop=slug]/sessions/+page.server';
import { load as loadRunPage } from '../../src/routes/(app)/w/[workshop=slug]/sessions/[sessionId=id]/+page.server';

const HOUR = 3_600_000;
const sharedUrl = process.env.DATABASE_URL!;
const scratchName = `cellsitter_demo_${randomUUID().slice(0, 8)}`;
const admin = postgres(sharedUrl, { max: 1, onnotice: () => {} });
let loadedAt: Date;

beforeAll(async () => {
	await admin.unsafe(`create database ${scratchName}`);
	const url = new URL(sharedUrl);
	url.pathname = `/${scratchName}`;
	await closeDb();
	process.env.DATABASE_URL = url.toString();
	rereadServerEnv();
	await applyMigrations();
	loadedAt = new Date();
	expect(await loadDemoIfEmpty('demo-password-for-tests')).toBe(true);
});

afterAll(async () => {
	await closeDb();
	process.env.DATABASE_URL = sharedUrl;
	rereadServerEnv();
	await admin.unsafe(`drop database if exists ${scratchName} with (force)`);
	await admin.end();
});

async function sessionsOf(packName: string) {
	return db
		.select({ session: chargeSessions })
		.from(chargeSessions)
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.where(eq(packs.name, packName));
}

describe('the demo sessions', () => {
	it("has the cargo trike's overnight top balance done, with hourly readings of every group and a night watch", async () => {
		const rows = (await sessionsOf('Cargo trike pack')).filter((r) => r.session.name === 'First top balance');
		expect(rows).toHaveLength(1);
		const s = rows[0].session;
		expect(s).toMatchObject({ status: 'done', kind: 'channels' });
		expect(s.startedAt!.getTime()).toBeLessThan(loadedAt.getTime() - 7 * 24 * HOUR);
		expect(s.endedAt!.getTime()).toBeGreaterThan(s.startedAt!.getTime());
		// A night watch is one of its hands-on windows, and the plan has nobody-there spans of none.
		expect(s.handsOn.once.length).toBeGreaterThan(0);
		expect((s.planSummary as { unattended: unknown[] }).unattended).toEqual([]);
		const [tech] = await db.select().from(users).where(eq(users.email, 'technician@larkfield.test'));
		expect(s.watchUserId).toBe(tech.id);

		const steps = await db.select().from(sessionSteps).where(eq(sessionSteps.sessionId, s.id)).orderBy(asc(sessionSteps.position));
		// 13 groups, one step each, on the four channels; every step ended.
		expect(steps).toHaveLength(13);
		expect(new Set(steps.map((st) => st.channelId)).size).toBe(4);
		expect(steps.every((st) => st.status === 'done' && st.actualStart && st.actualEnd)).toBe(true);
		// Three or four groups at a time: at the first step's start, four steps overlap.
		const t0 = steps[0].actualStart!.getTime() + 60_000;
		expect(steps.filter((st) => st.actualStart!.getTime() <= t0 && st.actualEnd!.getTime() > t0)).toHaveLength(4);
		// The night: it ran past midnight in the workshop's zone.
		expect(s.endedAt!.getTime() - s.startedAt!.getTime()).toBeGreaterThan(6 * HOUR);

		const logged = await db.select().from(readings).where(eq(readings.sessionId, s.id)).orderBy(asc(readings.takenAt));
		const hours = (s.endedAt!.getTime() - s.startedAt!.getTime()) / HOUR;
		// Every group at least once an hour through the session.
		expect(logged.length).toBeGreaterThanOrEqual(13 * Math.floor(hours));
		expect(logged.every((r) => r.enteredBy === tech.id && r.source === 'hand')).toBe(true);
		const groups = await db.select().from(packGroups).where(eq(packGroups.packId, s.packId));
		expect(new Set(logged.map((r) => r.groupId))).toEqual(new Set(groups.map((g) => g.id)));
		// Volts per cell inside NMC's window (2.5–4.2 V, and under the over-voltage stop); currents only while charging, within the channel's 8 A.
		for (const r of logged) {
			expect(r.volts!).toBeGreaterThan(3.2);
			expect(r.volts!).toBeLessThanOrEqual(4.2);
			if (r.amps !== null) {
				expect(r.amps).toBeGreaterThan(0);
				expect(r.amps).toBeLessThanOrEqual(8.05);
				expect(r.stepId).not.toBeNull();
			}
		}
		// Charged: each group's last reading sits higher than its first.
		for (const g of groups) {
			const own = logged.filter((r) => r.groupId === g.id);
			expect(own[own.length - 1].volts!).toBeGreaterThan(own[0].volts! + 0.3);
		}
		const done = await db.select().from(auditEvents).where(and(eq(auditEvents.sessionId, s.id), eq(auditEvents.kind, 'session.done')));
		expect(done).toHaveLength(1);
	});

	it("has the trike's charge a month of riding later, whose drift alert on group 7 the technician acknowledged", async () => {
		const rides = (await sessionsOf('Cargo trike pack')).filter((r) => r.session.name !== 'First top balance');
		expect(rides).toHaveLength(1);
		const s = rides[0].session;
		expect(s).toMatchObject({ status: 'done', target: 'full' });
		const [first] = (await sessionsOf('Cargo trike pack')).filter((r) => r.session.name === 'First top balance');
		// About a month after the top balance, and over before now.
		expect(s.startedAt!.getTime() - first.session.endedAt!.getTime()).toBeGreaterThan(25 * 24 * HOUR);
		expect(s.endedAt!.getTime()).toBeLessThan(loadedAt.getTime());
		expect((s.planSummary as { unattended: unknown[] }).unattended).toEqual([]);

		const [tech] = await db.select().from(users).where(eq(users.email, 'technician@larkfield.test'));
		const [seven] = await db.select().from(packGroups).where(and(eq(packGroups.packId, s.packId), eq(packGroups.index, 7)));
		const raised = await db.select().from(alerts).where(eq(alerts.sessionId, s.id));
		expect(raised).toHaveLength(1);
		const alert = raised[0];
		expect(alert).toMatchObject({ kind: 'session-drift', severity: 'warning', groupId: seven.id, acknowledgedBy: tech.id });
		expect(alert.title).toMatch(/^Group 7: /);
		expect(alert.message).toMatch(/^Group 7 ended 40 mV below the others/);
		expect(alert.acknowledgedAt!.getTime()).toBeGreaterThan(alert.openedAt.getTime());
		expect(alert.ackNote.length).toBeGreaterThan(10);
		const details = alert.details as { previousSessionId: string; gapVolts: number };
		expect(details.previousSessionId).toBe(first.session.id);

		// Its numbers are the readings': group 7's last reading of the balancing step against the others'.
		const lastStep = (await db.select().from(sessionSteps).where(eq(sessionSteps.sessionId, s.id)).orderBy(asc(sessionSteps.position))).at(-1)!;
		const atEnd = await db.execute<{ group_id: string; volts: number }>(sql`
			select distinct on (group_id) group_id, volts from readings
			where session_id = ${s.id} and group_id is not null and volts is not null
				and taken_at between ${lastStep.actualStart!.toISOString()}::timestamptz and ${lastStep.actualEnd!.toISOString()}::timestamptz
			order by group_id, taken_at desc`);
		expect(atEnd).toHaveLength(13);
		const own = atEnd.find((r) => r.group_id === seven.id)!;
		const others = atEnd.filter((r) => r.group_id !== seven.id);
		const gap = own.volts - others.reduce((sum, r) => sum + r.volts, 0) / others.length;
		expect(gap).toBeLessThan(0);
		expect(Math.round(Math.abs(gap) * 1000)).toBe(40);
		expect(details.gapVolts).toBeCloseTo(gap, 6);

		// Acknowledged as the app does it: the audit row by the technician.
		const acks = await db.select().from(auditEvents).where(and(eq(auditEvents.subjectId, alert.id), eq(auditEvents.kind, 'alert.acknowledge')));
		expect(acks).toHaveLength(1);
		expect(acks[0]).toMatchObject({ actorId: tech.id, sessionId: s.id });
		expect(acks[0].at.getTime()).toBe(alert.acknowledgedAt!.getTime());
		// Its e-mails went out when it was raised; none waits to be sent now.
		const sent = await db.select().from(alertDeliveries).where(eq(alertDeliveries.alertId, alert.id));
		expect(sent.some((d) => d.userId === tech.id && d.channel === 'email' && d.status === 'sent')).toBe(true);
		expect(sent.filter((d) => d.status === 'pending')).toEqual([]);
	});

	it("has the camper battery's session running now: bulk done, a top-up step running, a reading within the hour", async () => {
		const rows = await sessionsOf('Camper house battery');
		expect(rows).toHaveLength(1);
		const s = rows[0].session;
		expect(s).toMatchObject({ status: 'running', kind: 'bulk-top-up', readingDueAt: null });
		expect(s.startedAt!.getTime()).toBeLessThan(loadedAt.getTime());
		expect((s.planSummary as { unattended: unknown[] }).unattended).toEqual([]);

		const steps = await db.select().from(sessionSteps).where(eq(sessionSteps.sessionId, s.id)).orderBy(asc(sessionSteps.position));
		expect(steps[0]).toMatchObject({ groupId: null, role: 'charge', status: 'done' });
		const running = steps.filter((st) => st.status === 'running');
		expect(running).toHaveLength(1);
		expect(running[0].role).toBe('top-up');
		expect(running[0].actualStart!.getTime()).toBeLessThanOrEqual(loadedAt.getTime());
		// The plan goes on after now.
		expect(running[0].expectedEnd.getTime()).toBeGreaterThan(loadedAt.getTime());

		const [last] = await db
			.select({ at: sql<Date>`max(${readings.takenAt})`.mapWith(readings.takenAt) })
			.from(readings)
			.where(eq(readings.sessionId, s.id));
		expect(last.at.getTime()).toBeLessThanOrEqual(Date.now());
		expect(Date.now() - last.at.getTime()).toBeLessThan(HOUR);
		// While the whole pack charged, the pack's own reading too (4 cells of LFP: 4 × 2.5–3.65 V).
		const packReadings = await db.select().from(readings).where(and(eq(readings.sessionId, s.id), isNull(readings.groupId)));
		expect(packReadings.length).toBeGreaterThan(0);
		for (const r of packReadings) expect(r.volts!).toBeGreaterThan(10), expect(r.volts!).toBeLessThanOrEqual(14.6);
		// The running step's group has a current logged on it.
		const onStep = await db.select().from(readings).where(eq(readings.stepId, running[0].id));
		expect(onStep.some((r) => r.amps !== null && r.groupId === running[0].groupId)).toBe(true);

		// The clock finds nothing due right after loading.
		const clock = await runReadingClock(new Date());
		expect(clock.marked).not.toContain(s.id);
	});

	it('lists them on the sessions page: running first, a viewer only the sessions of the pack they own, the clock\'s mark on a late one', async () => {
		const pageFor = async (email: string) => {
			const [user] = await db.select({ id: users.id, email: users.email, name: users.name }).from(users).where(eq(users.email, email));
			const url = new URL('http://127.0.0.1/w/larkfield/sessions');
			const event = { locals: { user, session: null }, params: { workshop: 'larkfield' }, url };
			return (await loadSessionsPage(event as unknown as Parameters<typeof loadSessionsPage>[0])) as {
				canPlan: boolean;
				sessions: (SessionListItem & { readingDueAt: Date | null })[];
			};
		};
		const owner = await pageFor('owner@larkfield.test');
		expect(owner.canPlan).toBe(true);
		expect(owner.sessions.map((s) => [s.packName, s.status])).toEqual([
			['Camper house battery', 'running'],
			['Cargo trike pack', 'done'],
			['Cargo trike pack', 'done']
		]);
		const camper = owner.sessions[0];
		expect(camper.stepsEnded).toBeGreaterThanOrEqual(2);
		expect(camper.stepsEnded).toBeLessThan(camper.stepsTotal);
		expect(camper.readingDueAt).toBeNull();

		// Its expected end is the run screen's, re-estimated from the readings, not the plan moved by
		// the step's delay: a technician reads one time on both screens.
		const runPage = (await loadRunPage({
			locals: { user: (await db.select({ id: users.id, email: users.email, name: users.name }).from(users).where(eq(users.email, 'owner@larkfield.test')))[0], session: null },
			params: { workshop: 'larkfield', sessionId: camper.id },
			url: new URL(`http://127.0.0.1/w/larkfield/sessions/${camper.id}`),
			depends: () => {}
		} as unknown as Parameters<typeof loadRunPage>[0])) as { view: { expectedEnd: string | null } };
		expect(runPage.view.expectedEnd).not.toBeNull();
		expect(Math.abs(camper.expectedEnd!.getTime() - new Date(runPage.view.expectedEnd!).getTime())).toBeLessThan(60_000);

		// The pack's owner is a viewer: the trike's session only, and no planning.
		const viewer = await pageFor('viewer@larkfield.test');
		expect(viewer.canPlan).toBe(false);
		expect(viewer.sessions.map((s) => s.packName)).toEqual(['Cargo trike pack', 'Cargo trike pack']);

		// Two hours on with no reading, the clock marks the camper's session and the list shows it.
		await runReadingClock(new Date(Date.now() + 2 * HOUR));
		const later = await pageFor('technician@larkfield.test');
		expect(later.canPlan).toBe(false);
		expect(later.sessions.find((s) => s.id === camper.id)?.readingDueAt).toBeInstanceOf(Date);
		expect(later.sessions.find((s) => s.status === 'done')?.readingDueAt).toBeNull();
	});
});
