/**
 * Alerts raised on readings and by the clock, and delivered, against the real database, pg-boss,
 * the fake SMTP server and the fake push service (whose payloads it decrypts with the test
 * subscription's keys). The limits are the engine's defaults for NMC charged to 4.20 V per cell:
 * watch above 4.22 V, act now above 4.25 V (defaultLimits: set volts + 0.02, the family's
 * maximum 4.20 + 0.05).
 */
import { randomUUID } from 'node:crypto';
import { and, eq, sql } from 'drizzle-orm';
import { afterAll, describe, expect, it } from 'vitest';
import { acknowledgeAlert } from '$lib/server/alerts/inbox';
import { deliverOne, escalateAlerts, runAlertClock, sweepOutbox } from '$lib/server/alerts/deliver';
import { evaluateReadingsInTx, readingsUnchanged } from '$lib/server/alerts/raise';
import type { Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { alertDeliveries, alerts, auditEvents, chargeSessions, memberships, pushSubscriptions, readings } from '$lib/server/db/schema';
import { rereadServerEnv } from '$lib/server/env';
import { fakePushes, makeFakePushSubscription } from '$lib/server/fakes';
import { newId } from '$lib/server/ids';
import { startJobs, stopJobs, workQueueNow } from '$lib/server/jobs/registry';
import { readingInputSchema } from '$lib/schemas/readings';
import { finishStep } from '$lib/server/sessions/core';
import { logReadings } from '$lib/server/sessions/readings';
import { startFakes } from '../fakes/server.js';
import { joinAs, mailTo } from './helpers';
import { sessionFixture } from './readings-fixture';

const MINUTE = 60_000;

afterAll(async () => {
	await stopJobs();
});

function reading(groupIndex: number | null, values: { volts?: number; amps?: number; tempC?: number }, at = new Date()) {
	return readingInputSchema.parse({ clientId: randomUUID(), groupIndex, takenAt: at.toISOString(), ...values });
}

const log = (member: Member, sessionId: string, inputs: ReturnType<typeof reading>[]) =>
	logReadings({ kind: 'member', member }, sessionId, inputs, 'hand');

const alertsOf = (sessionId: string) => db.select().from(alerts).where(eq(alerts.sessionId, sessionId)).orderBy(alerts.openedAt);
const deliveriesOf = (alertId: string) => db.select().from(alertDeliveries).where(eq(alertDeliveries.alertId, alertId));

async function subscribe(userId: string) {
	const sub = await makeFakePushSubscription();
	await db.insert(pushSubscriptions).values({ id: newId(), userId, endpoint: sub.endpoint, p256dh: sub.keys.p256dh, auth: sub.keys.auth, label: 'Test phone' });
	return sub;
}

describe('alerts raised on readings', () => {
	it('a 4.30 V reading on an NMC session: one critical alert, one e-mail and one decrypted push naming the group', async () => {
		const { owner, session } = await sessionFixture();
		const sub = await subscribe(owner.user.id);
		expect(await log(owner, session.id, [reading(3, { volts: 4.3 })])).toMatchObject({ ok: true, stored: 1 });

		const raised = await alertsOf(session.id);
		expect(raised).toHaveLength(1);
		expect(raised[0]).toMatchObject({ kind: 'over-voltage', severity: 'critical', value: 4.3, threshold: 4.25, unit: 'V' });
		expect(raised[0].title).toBe('Group 3: over voltage');
		expect(raised[0].action).toContain('Disconnect the charger from group 3');
		expect(raised[0].action).toContain('call the fire service');
		expect(raised[0].readingId).not.toBeNull();

		// The outbox rows were written with the alert; the jobs send them.
		const rows = await deliveriesOf(raised[0].id);
		expect(rows.map((r) => r.channel).sort()).toEqual(['email', 'push']);
		await workQueueNow('deliver-alert');
		const sent = await deliveriesOf(raised[0].id);
		expect(sent.map((r) => r.status)).toEqual(['sent', 'sent']);
		expect(sent.every((r) => r.attempts === 1 && r.log.length === 1 && r.log[0].ok)).toBe(true);

		const mails = (await mailTo(owner.user.email)).filter((m) => m.subject.includes('Group 3: over voltage'));
		expect(mails).toHaveLength(1);
		expect(mails[0].subject).toMatch(/^\[ACT NOW\] Group 3: over voltage/);
		expect(mails[0].text).toContain('4.300');
		expect(mails[0].text).toContain(`/alerts/${raised[0].id}`);
		const pushes = await fakePushes(sub.endpoint);
		expect(pushes).toHaveLength(1);
		const payload = pushes[0].json as { title: string; body: string; url: string; severity: string };
		expect(payload.title).toContain('Group 3');
		expect(payload.severity).toBe('critical');
		expect(payload.url).toContain(`/alerts/${raised[0].id}`);

		// The same condition again raises nothing; it is only seen again.
		await log(owner, session.id, [reading(3, { volts: 4.31 })]);
		expect(await alertsOf(session.id)).toHaveLength(1);
		await workQueueNow('deliver-alert');
		expect(await fakePushes(sub.endpoint)).toHaveLength(1);
	});

	it('a warning that turns critical is a new alert; one that clears and comes back is new again', async () => {
		const { owner, session } = await sessionFixture();
		await log(owner, session.id, [reading(2, { volts: 4.23 })]);
		let rows = await alertsOf(session.id);
		expect(rows.map((r) => [r.kind, r.severity, r.clearedAt === null])).toEqual([['over-voltage', 'warning', true]]);

		await log(owner, session.id, [reading(2, { volts: 4.27 })]);
		rows = await alertsOf(session.id);
		expect(rows.map((r) => [r.severity, r.clearedAt === null])).toEqual([
			['warning', false],
			['critical', true]
		]);

		await log(owner, session.id, [reading(2, { volts: 4.1 })]);
		rows = await alertsOf(session.id);
		expect(rows.every((r) => r.clearedAt !== null)).toBe(true);

		await log(owner, session.id, [reading(2, { volts: 4.27 })]);
		rows = await alertsOf(session.id);
		expect(rows.map((r) => [r.severity, r.clearedAt === null])).toEqual([
			['warning', false],
			['critical', false],
			['critical', true]
		]);
	});

	it('two instances judging the same reading at once raise one alert with one set of deliveries', async () => {
		const { owner, session, pack, groups } = await sessionFixture();
		// Stored without judging, as if by an instance that stopped right after the insert.
		await db.insert(readings).values({
			sessionId: session.id,
			packId: pack.id,
			groupId: groups[1].id,
			takenAt: new Date(),
			volts: 4.4,
			source: 'hand',
			enteredBy: owner.user.id,
			clientId: randomUUID()
		});
		const both = await Promise.all([
			db.transaction((tx) => evaluateReadingsInTx(tx, session.id)),
			db.transaction((tx) => evaluateReadingsInTx(tx, session.id))
		]);
		const rows = await alertsOf(session.id);
		expect(rows).toHaveLength(1);
		expect(both.map((c) => c.raised.length).sort()).toEqual([0, 1]);
		// One row per channel for the owner: e-mail to send, push noted as having no device.
		expect((await deliveriesOf(rows[0].id)).map((d) => [d.channel, d.status]).sort()).toEqual([
			['email', 'pending'],
			['push', 'gone']
		]);
	});

	it('posts that arrive together share judgements; each answer comes after a judgement that saw its reading', async () => {
		const { owner, session, groups } = await sessionFixture();
		const at = Date.now();
		// Twelve posts at once; the eighth is 4.30 V on group 4 (act now above 4.25 V), the others are
		// normal readings of groups 1 to 3.
		const posts = Array.from({ length: 12 }, (_, i) =>
			log(owner, session.id, [reading(i === 7 ? 4 : 1 + (i % 3), { volts: i === 7 ? 4.3 : 3.9 }, new Date(at + i * 1000))])
		);
		const overVoltage = async () => (await alertsOf(session.id)).filter((a) => a.kind === 'over-voltage');
		const seenByItsPost = posts[7].then(async (r) => {
			expect(r).toMatchObject({ ok: true, stored: 1 });
			return overVoltage();
		});
		expect((await seenByItsPost).map((a) => [a.severity, a.value])).toEqual([['critical', 4.3]]);
		expect((await Promise.all(posts)).every((r) => r.ok && r.stored === 1)).toBe(true);
		const after = await overVoltage();
		expect(after.map((a) => [a.groupId, a.clearedAt])).toEqual([[groups[3].id, null]]);
	});

	it('one statement tells when judging would change nothing; a condition that changes, or another judgement under way, sends it to the row lock', async () => {
		const { owner, session, pack, groups } = await sessionFixture();
		const at = Date.now();
		await log(owner, session.id, [reading(2, { volts: 3.9 }, new Date(at))]);
		expect(await readingsUnchanged(db, session.id)).toBe(true);
		// A reading over the limit stored without judging: raising it is a change.
		await db.insert(readings).values({
			sessionId: session.id,
			packId: pack.id,
			groupId: groups[1].id,
			takenAt: new Date(at + 1000),
			volts: 4.3,
			source: 'hand',
			enteredBy: owner.user.id,
			clientId: randomUUID()
		});
		expect(await readingsUnchanged(db, session.id)).toBe(false);
		await db.transaction((tx) => evaluateReadingsInTx(tx, session.id));
		// Raised and just seen: nothing to change.
		expect(await readingsUnchanged(db, session.id)).toBe(true);
		// While another judgement holds the session's row, the answer is never "unchanged".
		let release!: () => void;
		const held = new Promise<void>((r) => (release = r));
		let locked!: () => void;
		const lockTaken = new Promise<void>((r) => (locked = r));
		const holder = db.transaction(async (tx) => {
			await tx.execute(sql`select 1 from charge_sessions where id = ${session.id} for no key update`);
			locked();
			await held;
		});
		await lockTaken;
		expect(await readingsUnchanged(db, session.id)).toBe(false);
		release();
		await holder;
		expect(await readingsUnchanged(db, session.id)).toBe(true);
	});

	it('readings left unjudged (an instance stopped after the commit) are judged by the alert clock, and by a repeat post', async () => {
		const { owner, session, pack, groups } = await sessionFixture();
		const clientId = randomUUID();
		await db.insert(readings).values({
			sessionId: session.id,
			packId: pack.id,
			groupId: groups[2].id,
			takenAt: new Date(),
			volts: 4.3,
			source: 'hand',
			enteredBy: owner.user.id,
			clientId
		});
		expect(await alertsOf(session.id)).toHaveLength(0);
		// The client got no answer and sends the same reading again: stored once, judged now.
		const again = readingInputSchema.parse({ clientId, groupIndex: 3, takenAt: new Date().toISOString(), volts: 4.3 });
		expect(await log(owner, session.id, [again])).toMatchObject({ ok: true, stored: 0, duplicates: 1 });
		expect((await alertsOf(session.id)).map((a) => a.kind)).toEqual(['over-voltage']);

		const other = await sessionFixture();
		await db.insert(readings).values({
			sessionId: other.session.id,
			packId: other.pack.id,
			groupId: other.groups[1].id,
			takenAt: new Date(),
			volts: 4.3,
			source: 'hand',
			enteredBy: other.owner.user.id,
			clientId: randomUUID()
		});
		await runAlertClock();
		expect((await alertsOf(other.session.id)).map((a) => [a.kind, a.severity])).toEqual([['over-voltage', 'critical']]);
	});

	it('quiet time holds back an information alert for a watcher, not for the technician on watch, never a critical one', async () => {
		const { owner, session, steps } = await sessionFixture();
		const tech = await joinAs(owner, 'technician');
		await db.update(chargeSessions).set({ watchUserId: tech.user.id }).where(eq(chargeSessions.id, session.id));
		// Both quiet all day but one minute (a window that always holds now, whatever the zone).
		const now = new Date();
		const hhmm = (d: Date) =>
			new Intl.DateTimeFormat('en-GB', { hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZone: owner.workshop.timeZone }).format(d);
		const quiet = { quietFrom: hhmm(new Date(now.getTime() + 2 * MINUTE)), quietTo: hhmm(new Date(now.getTime() + MINUTE)) };
		await db.update(memberships).set(quiet).where(eq(memberships.workshopId, owner.workshop.id));

		// Group 1 is on the charger (its step runs): at its set volts with the current down to
		// 0.2 A, under C/20 of the 2 × 4 Ah group (0.4 A): the step is done, an information alert.
		await log(owner, session.id, [reading(1, { volts: 4.2, amps: 0.2 }, now)]);
		const [finished] = (await alertsOf(session.id)).filter((a) => a.kind === 'step-finished');
		expect(finished.severity).toBe('info');
		const info = await deliveriesOf(finished.id);
		const byPerson = (rows: typeof info, userId: string) => rows.filter((r) => r.userId === userId && r.channel === 'email').map((r) => [r.reason, r.status]);
		expect(byPerson(info, owner.user.id)).toEqual([['watcher', 'held']]);
		expect(byPerson(info, tech.user.id)).toEqual([['on-watch', 'pending']]);

		await log(owner, session.id, [reading(2, { tempC: 65 }, now)]);
		const [hot] = (await alertsOf(session.id)).filter((a) => a.kind === 'over-temperature');
		expect(hot.severity).toBe('critical');
		const critical = await deliveriesOf(hot.id);
		expect(byPerson(critical, owner.user.id)).toEqual([['watcher', 'pending']]);
		expect(byPerson(critical, tech.user.id)).toEqual([['on-watch', 'pending']]);

		// Ending the step answers its note: cleared and acknowledged by whoever ended it, in the audit.
		expect(await finishStep(tech, session.id, steps[0].id)).toMatchObject({ ok: true });
		const [settled] = (await alertsOf(session.id)).filter((a) => a.kind === 'step-finished');
		expect(settled).toMatchObject({ acknowledgedBy: tech.user.id, ackNote: 'Step ended.' });
		expect(settled.clearedAt).not.toBeNull();
		const audit = await db
			.select()
			.from(auditEvents)
			.where(and(eq(auditEvents.subjectType, 'alert'), eq(auditEvents.subjectId, finished.id)));
		expect(audit.map((a) => [a.kind, a.actorId])).toEqual([['alert.acknowledge', tech.user.id]]);
	});
});

describe('the alert clock', () => {
	it('raises reading-overdue once, and clears it when a reading arrives', async () => {
		const { owner, session } = await sessionFixture();
		// Started 80 minutes ago with no reading; 60 min interval + 15 min grace: overdue since 5 minutes.
		await db.update(chargeSessions).set({ startedAt: new Date(Date.now() - 80 * MINUTE) }).where(eq(chargeSessions.id, session.id));
		await runAlertClock();
		await runAlertClock();
		let rows = (await alertsOf(session.id)).filter((a) => a.kind === 'reading-overdue');
		expect(rows).toHaveLength(1);
		expect(rows[0].severity).toBe('warning');
		expect(rows[0].title).toBe('Reading overdue');
		await log(owner, session.id, [reading(1, { volts: 3.9 })]);
		await runAlertClock();
		rows = (await alertsOf(session.id)).filter((a) => a.kind === 'reading-overdue');
		expect(rows.map((r) => r.clearedAt !== null)).toEqual([true]);
	});

	it('escalates an unacknowledged critical alert to every owner after the escalation time; an acknowledged one does not', async () => {
		const { owner, session } = await sessionFixture();
		const second = await joinAs(owner, 'owner');
		const tech = await joinAs(owner, 'technician');
		await log(owner, session.id, [reading(1, { volts: 4.3 }), reading(2, { tempC: 70 })]);
		const rows = await alertsOf(session.id);
		const over = rows.find((a) => a.kind === 'over-voltage')!;
		const hot = rows.find((a) => a.kind === 'over-temperature')!;
		expect(await acknowledgeAlert(tech, hot.id, 'Charger off, fan on group 2')).toMatchObject({ ok: true });

		// Nine minutes on (the default escalation time is 10): nothing yet.
		expect(await escalateAlerts(new Date(over.openedAt.getTime() + 9 * MINUTE))).not.toContain(over.id);
		const due = new Date(over.openedAt.getTime() + 10 * MINUTE);
		const escalated = await escalateAlerts(due);
		expect(escalated).toContain(over.id);
		expect(escalated).not.toContain(hot.id);
		expect(await escalateAlerts(new Date(due.getTime() + MINUTE))).not.toContain(over.id);

		const esc = (await deliveriesOf(over.id)).filter((d) => d.reason === 'escalation' && d.channel === 'email');
		expect(esc.map((d) => d.userId).sort()).toEqual([owner.user.id, second.user.id].sort());
		expect((await deliveriesOf(hot.id)).some((d) => d.reason === 'escalation')).toBe(false);
		await workQueueNow('deliver-alert');
		// The second owner is a watcher too: the alert first, then the escalation, one of each.
		const mails = (await mailTo(second.user.email)).filter((m) => m.subject.includes('Group 1: over voltage'));
		expect(mails.filter((m) => m.subject.includes('(not acknowledged)'))).toHaveLength(1);
		expect(mails.filter((m) => m.text.includes('Nobody has acknowledged this act now alert in 10 minutes'))).toHaveLength(1);
	});
});

describe('delivery that survives outages and crashes', () => {
	// 10 s in `npm test`; a few minutes with CELLSITTER_STRESS=1 (`npm run test:stress`).
	const OUTAGE_S = process.env.CELLSITTER_STRESS === '1' ? 180 : 10;
	it(`delivers every alert raised while the mail server and the push service are both down (${OUTAGE_S} s), once each, after they return`, async () => {
		// Fakes of this test's own: a mail server stopped for the outage and started again on its port,
		// and a push service that answers 503 with Retry-After for the outage.
		const probe = await startFakes({ smtpPort: 0, httpPort: 0, pushPort: 0 });
		const smtpPort = probe.smtpPort;
		await probe.close();
		const pushSide = await startFakes({ smtpPort: 0, httpPort: 0, pushPort: 0 });
		const saved = { SMTP_URL: process.env.SMTP_URL, FAKES_URL: process.env.FAKES_URL };
		process.env.SMTP_URL = `smtp://127.0.0.1:${smtpPort}`;
		process.env.FAKES_URL = pushSide.httpUrl;
		rereadServerEnv();
		let mailSide: Awaited<ReturnType<typeof startFakes>> | undefined;
		try {
			const { owner, session } = await sessionFixture();
			const sub = await subscribe(owner.user.id);
			const down = await fetch(`${pushSide.httpUrl}/push/outage`, { method: 'POST', body: JSON.stringify({ seconds: OUTAGE_S }) });
			expect(down.status).toBe(200);
			const outageEnds = Date.now() + OUTAGE_S * 1000;
			await startJobs('work');
			// Three conditions, three alerts, while both services are down.
			await log(owner, session.id, [reading(4, { volts: 4.32 })]);
			await log(owner, session.id, [reading(2, { volts: 3.9, tempC: 66 })]);
			await log(owner, session.id, [reading(1, { volts: 2.4 })]);
			const raised = await alertsOf(session.id);
			expect(raised.map((a) => a.title).sort()).toEqual(['Group 1: under voltage', 'Group 2: over temperature', 'Group 4: over voltage']);
			const ids = raised.map((a) => a.id);
			const rowsOf = async () => (await Promise.all(ids.map(deliveriesOf))).flat();
			expect((await rowsOf()).map((r) => r.channel).sort()).toEqual(['email', 'email', 'email', 'push', 'push', 'push']);
			// Both channels are tried and fail while the services are down.
			await expect.poll(async () => (await rowsOf()).every((r) => r.attempts >= 1 && r.status !== 'sent'), { timeout: 15_000 }).toBe(true);
			await new Promise((r) => setTimeout(r, Math.max(0, outageEnds - Date.now())));
			mailSide = await startFakes({ smtpPort, httpPort: 0, pushPort: 0 });
			// Back: every row is sent, each alert once per channel. The retries back off from 2 s, each
			// delay 1–2 × double the last (pg-boss), so the try after the last failed one can come up to
			// about twice the outage later: a try that fails just before a 180 s outage ends may be
			// followed by a delay of up to 256 s.
			await expect
				.poll(async () => (await rowsOf()).map((r) => r.status), { timeout: 2 * OUTAGE_S * 1000 + 60_000, interval: 1000 })
				.toEqual(['sent', 'sent', 'sent', 'sent', 'sent', 'sent']);
			// The fake mail server files a message once it has parsed it: a moment after accepting it.
			const mailed = () => mailSide!.mailbox.list(owner.user.email).map((m) => m.subject);
			await expect.poll(() => raised.map((a) => mailed().filter((t) => t.includes(a.title)).length), { timeout: 10_000 }).toEqual([1, 1, 1]);
			const pushes = (await fakePushes(sub.endpoint)).map((p) => (p.json as { title: string }).title);
			for (const alert of raised) expect(pushes.filter((t) => t.includes(alert.title)), alert.title).toHaveLength(1);
			// Each row's log shows the failed tries during the outage, then the one that went through.
			const rows = await rowsOf();
			expect(rows.every((r) => r.attempts >= 2 && r.log.length === r.attempts)).toBe(true);
			expect(rows.every((r) => r.log.at(-1)!.ok && r.log.slice(0, -1).every((a) => !a.ok))).toBe(true);
		} finally {
			await stopJobs();
			await mailSide?.close();
			await pushSide.close();
			process.env.SMTP_URL = saved.SMTP_URL;
			process.env.FAKES_URL = saved.FAKES_URL;
			rereadServerEnv();
		}
	}, 3 * OUTAGE_S * 1000 + 150_000);

	it('queues again the outbox rows a crash left behind, and a second job for a sent row sends nothing', async () => {
		const { owner, session, pack, groups } = await sessionFixture();
		// The reading and its alert committed, then the process stopped before handing the
		// deliveries to pg-boss (no dispatch after this transaction).
		await db.transaction(async (tx) => {
			await tx.insert(readings).values({
				sessionId: session.id,
				packId: pack.id,
				groupId: groups[1].id,
				takenAt: new Date(),
				volts: 4.33,
				source: 'hand',
				enteredBy: owner.user.id,
				clientId: randomUUID()
			});
			await evaluateReadingsInTx(tx, session.id);
		});
		const [alert] = await alertsOf(session.id);
		const email = async () => (await deliveriesOf(alert.id)).find((d) => d.channel === 'email')!;
		const row = await email();
		expect(row).toMatchObject({ status: 'pending', queuedAt: null });
		await workQueueNow('deliver-alert');
		expect((await email()).status).toBe('pending');
		// The sweep leaves rows younger than 30 s (they may be on their way) and takes older ones.
		await sweepOutbox();
		expect((await email()).queuedAt).toBeNull();
		await db.update(alertDeliveries).set({ createdAt: new Date(Date.now() - 2 * MINUTE) }).where(eq(alertDeliveries.id, row.id));
		await sweepOutbox();
		await workQueueNow('deliver-alert');
		expect((await email())).toMatchObject({ status: 'sent', attempts: 1 });
		expect(await deliverOne(row.id)).toBe('skipped');
		const mails = (await mailTo(owner.user.email)).filter((m) => m.subject.includes('Group 2: over voltage'));
		expect(mails).toHaveLength(1);
	});

	it('logs a try its process never finished as cut off, and the e-mail sent again keeps its Message-ID', async () => {
		const { owner, session } = await sessionFixture();
		await log(owner, session.id, [reading(3, { volts: 4.34 })]);
		const [alert] = await alertsOf(session.id);
		const email = async () => (await deliveriesOf(alert.id)).find((d) => d.channel === 'email')!;
		await workQueueNow('deliver-alert');
		const first = await email();
		expect(first.status).toBe('sent');
		expect(first.log.map((a) => [a.ok, a.cut ?? false])).toEqual([[true, false]]);
		const subject = 'Group 3: over voltage';
		const sent = (await mailTo(owner.user.email)).filter((m) => m.subject.includes(subject));
		// The Message-ID names the delivery row, on the host of ORIGIN (127.0.0.1 in the tests).
		expect(sent.map((m) => m.messageId)).toEqual([`<${first.id}.alert@127.0.0.1>`]);

		// A crash after the claim: the row is pending again with a claim newer than its last outcome,
		// as a job that expired under a killed process leaves it.
		const claimedAt = new Date(new Date(first.log[0].at).getTime() + 1000);
		await db.update(alertDeliveries).set({ status: 'pending', lastAttemptAt: claimedAt, sentAt: null }).where(eq(alertDeliveries.id, first.id));
		expect(await deliverOne(first.id)).toBe('sent');
		const after = await email();
		expect(after.attempts).toBe(3);
		expect(after.log.map((a) => [a.ok, a.cut ?? false])).toEqual([
			[true, false],
			[false, true],
			[true, false]
		]);
		expect(after.log[1].at).toBe(claimedAt.toISOString());
		expect(after.log[1].detail).toMatch(/may arrive twice/);
		await expect
			.poll(async () => (await mailTo(owner.user.email)).filter((m) => m.subject.includes(subject)).map((m) => m.messageId))
			.toEqual([`<${first.id}.alert@127.0.0.1>`, `<${first.id}.alert@127.0.0.1>`]);

		// A try that finished (failed or not) is no cut: a plain retry logs nothing extra.
		await db.update(alertDeliveries).set({ status: 'pending' }).where(eq(alertDeliveries.id, first.id));
		expect(await deliverOne(first.id)).toBe('sent');
		expect((await email()).log.filter((a) => a.cut)).toHaveLength(1);
	});
});
