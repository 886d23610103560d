// The printable session report's data, against a real PostgreSQL: a small session that ran a step,
// logged readings, raised an alert someone acknowledged with a note, and was stopped with a reason;
// and who may load the report at all.
import { eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { load } from '../../src/routes/(app)/w/[workshop=slug]/sessions/[sessionId=id]/report/+page.server';
import { acknowledgeAlert } from '$lib/server/alerts/inbox';
import type { Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { alerts, packs } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { finishStep, stopSession } from '$lib/server/sessions/core';
import { logReadings } from '$lib/server/sessions/readings';
import type { SessionReport } from '$lib/server/sessions/report';
import { readingInputSchema } from '$lib/schemas/readings';
import { joinAs, memberOf, signUpOwner } from './helpers';
import { sessionFixture } from './readings-fixture';

type LoadEvent = Parameters<typeof load>[0];

/** The report as `who` loads it through the route, with the workshop `slug` in the URL. */
async function reportAs(who: Member, slug: string, sessionId: string): Promise<SessionReport> {
	const path = `/w/${slug}/sessions/${sessionId}/report`;
	const event = { locals: { user: who.user, session: null }, params: { workshop: slug, sessionId }, url: new URL(`http://127.0.0.1:3100${path}`) };
	const data = (await load(event as unknown as LoadEvent)) as { report: SessionReport };
	return data.report;
}

/** A 4S2P session: step 1 run and finished, readings of groups 1 and 2, a drift alert on group 2 acknowledged, then stopped. */
async function ranSession() {
	const f = await sessionFixture({ series: 4 });
	const { owner, session, steps, groups, pack } = f;
	const at = (minutesAgo: number) => new Date(Date.now() - minutesAgo * 60_000).toISOString();
	const inputs = [
		{ clientId: 'r1', groupIndex: 1, takenAt: at(50), volts: 3.71 },
		{ clientId: 'r2', groupIndex: 2, takenAt: at(50), volts: 3.69 },
		{ clientId: 'r3', groupIndex: 1, takenAt: at(10), volts: 4.05 },
		{ clientId: 'r4', groupIndex: 2, takenAt: at(10), volts: 3.98 }
	].map((r) => readingInputSchema.parse(r));
	expect(await logReadings({ kind: 'member', member: owner }, session.id, inputs, 'hand')).toMatchObject({ ok: true, stored: 4 });
	expect(await finishStep(owner, session.id, steps[0].id)).toMatchObject({ ok: true });

	const alertId = newId();
	await db.insert(alerts).values({
		id: alertId,
		workshopId: owner.workshop.id,
		packId: pack.id,
		sessionId: session.id,
		groupId: groups[1].id,
		groupKey: groups[1].id,
		kind: 'drift',
		severity: 'warning',
		title: 'Group 2: drifting from the others',
		message: 'Group 2 is 70 mV below the mean of the groups.',
		action: 'Check group 2’s leads and its balance wire.',
		value: 0.07,
		threshold: 0.05,
		unit: 'V',
		openedAt: new Date(Date.now() - 9 * 60_000),
		lastSeenAt: new Date(Date.now() - 9 * 60_000)
	});
	const note = 'Balance lead of group 2 was loose; reseated it.';
	expect(await acknowledgeAlert(owner, alertId, note)).toMatchObject({ ok: true });
	const reason = 'Group 3 got warm at the terminal';
	expect(await stopSession(owner, session.id, reason)).toMatchObject({ ok: true });
	return { ...f, alertId, note, reason };
}

describe('the session report', () => {
	it('holds the pack, plan against actual per step, the readings, the acknowledged alert and who did what', async () => {
		const { owner, session, ws, steps, note, reason } = await ranSession();
		const report = await reportAs(owner, ws, session.id);

		expect(report.workshop).toEqual({ name: owner.workshop.name, timeZone: 'Europe/Berlin' });
		expect(report.pack).toMatchObject({ name: 'Test pack', layout: '4S2P', bmsFitted: false });
		expect(report.pack.chemistry).toMatch(/^NMC/);
		expect(report.pack.cellSpec.capacityAh).toBe(4);
		expect(report.session).toMatchObject({ id: session.id, status: 'stopped', stopReason: reason, kindLabel: 'One group at a time', readings: 4 });

		// Plan against actual: the fixture plans 2 h per step from an hour ago; step 1 ran from then until now.
		expect(report.steps.map((s) => [s.position, s.groupIndex, s.status])).toEqual([
			[1, 1, 'done'],
			[2, 2, 'waiting'],
			[3, 3, 'waiting'],
			[4, 4, 'waiting']
		]);
		expect(report.steps[0].expectedHours).toBeCloseTo(2, 6);
		expect(report.steps[0].expectedStart.getTime()).toBe(steps[0].expectedStart.getTime());
		expect(report.steps[0].actualStart!.getTime()).toBe(steps[0].actualStart!.getTime());
		expect(report.steps[0].actualHours!).toBeGreaterThan(0.99);
		expect(report.steps[0].actualHours!).toBeLessThan(1.1);
		expect(report.steps[1].actualStart).toBeNull();
		expect(report.steps[1].actualHours).toBeNull();

		// The chart's lines: one per group with readings, first and last volts as logged.
		expect(report.chart.volts.map((l) => l.label)).toEqual(['G1', 'G2']);
		expect(report.chart.volts[0].points.map((p) => p[1])).toEqual([3.71, 4.05]);
		expect(report.chart.volts[1].points.map((p) => p[1])).toEqual([3.69, 3.98]);

		expect(report.alerts).toHaveLength(1);
		expect(report.alerts[0]).toMatchObject({ title: 'Group 2: drifting from the others', groupIndex: 2, ackNote: note });
		expect(report.alerts[0].acknowledgedBy?.name).toBe(owner.user.name);
		expect(report.alerts[0].acknowledgedAt).toBeInstanceOf(Date);

		const said = report.activity.map((a) => [a.who, a.title, ...a.details].join(' | '));
		expect(said).toEqual(
			expect.arrayContaining([
				`${owner.user.name} | Step ended: step 1 (group 1)`,
				`${owner.user.name} | Alert acknowledged: Group 2: drifting from the others | Note: “${note}”`,
				`${owner.user.name} | Session stopped | Reason: ${reason}`
			])
		);
		// Oldest first: the step ended before the acknowledgement, which came before the stop.
		const order = ['Step ended', 'Alert acknowledged', 'Session stopped'].map((t) => said.findIndex((s) => s.includes(t)));
		expect(order.every((i) => i >= 0)).toBe(true);
		expect([...order].sort((a, b) => a - b)).toEqual(order);
	});

	it('is shown to the pack owner who is a viewer, and is a 404 for a viewer of another pack and for another workshop', async () => {
		const { owner, session, ws, pack } = await ranSession();
		const viewer = await joinAs(owner, 'viewer');
		await expect(reportAs(viewer, ws, session.id)).rejects.toMatchObject({ status: 404 });

		await db.update(packs).set({ packOwnerId: viewer.user.id }).where(eq(packs.id, pack.id));
		const seen = await reportAs(viewer, ws, session.id);
		expect(seen.session.id).toBe(session.id);
		expect(seen.alerts).toHaveLength(1);

		const stranger = await signUpOwner('report-stranger');
		const outsider = await memberOf(stranger.userId, stranger.workshopSlug);
		await expect(reportAs(outsider, outsider.workshop.slug, session.id)).rejects.toMatchObject({ status: 404 });
		await expect(reportAs(outsider, ws, session.id)).rejects.toMatchObject({ status: 404 });
	});
});

