/**
 * The alerts inbox, the alert page's data and the acknowledgement, against a real PostgreSQL. The
 * alert rows are written straight into the table (raising them is another module's job), so these
 * tests say only what the screens and the API do with them.
 */
import { and, asc, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import type { Member } from '$lib/server/auth/permissions';
import { acknowledgeAlert, alertSummary, getAlert, listAlerts } from '$lib/server/alerts/inbox';
import { db, sqlClient } from '$lib/server/db';
import { alertDeliveries, alerts, auditEvents, type Alert } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { createPack } from '$lib/server/packs';
import { SESSION_EVENTS_CHANNEL } from '$lib/server/sessions/notify';
import * as listApi from '../../src/routes/api/w/[workshop=slug]/alerts/+server';
import * as alertApi from '../../src/routes/api/w/[workshop=slug]/alerts/[alertId=id]/+server';
import * as ackApi from '../../src/routes/api/w/[workshop=slug]/alerts/[alertId=id]/ack/+server';
import * as alertPage from '../../src/routes/(app)/w/[workshop=slug]/alerts/[alertId=id]/+page.server';
import { apiEvent, joinAs } from './helpers';
import { addSession, sessionFixture } from './readings-fixture';

type AckEvent = Parameters<typeof ackApi.POST>[0];
type ListEvent = Parameters<typeof listApi.GET>[0];
type GetEvent = Parameters<typeof alertApi.GET>[0];

const minutesAgo = (m: number) => new Date(Date.now() - m * 60_000);

type Fixture = Awaited<ReturnType<typeof sessionFixture>>;

let kindCounter = 0;
/** One alert row of the fixture's session; kinds rotate so that the active-condition key never collides. */
async function insertAlert(
	f: { owner: Member; pack: { id: string }; session: { id: string } },
	o: Partial<Alert> & { groupId?: string | null } = {}
): Promise<Alert> {
	const kinds = ['over-voltage', 'under-voltage', 'over-temperature', 'cold-charge', 'heat-rise', 'drift', 'step-overrun'] as const;
	const groupId = o.groupId ?? null;
	const openedAt = o.openedAt ?? minutesAgo(10);
	const [row] = await db
		.insert(alerts)
		.values({
			id: newId(),
			workshopId: f.owner.workshop.id,
			packId: f.pack.id,
			sessionId: f.session.id,
			groupId,
			groupKey: groupId ?? '',
			kind: kinds[kindCounter++ % kinds.length],
			severity: 'warning',
			title: 'Group 2: over voltage',
			message: 'Group 2 is at 4.31 V, over the 4.25 V limit.',
			action: 'Disconnect the charger from group 2. If there is smoke or flame, get out, keep out and call the fire service.',
			value: 4.31,
			threshold: 4.25,
			unit: 'V',
			lastSeenAt: openedAt,
			...o,
			openedAt
		})
		.returning();
	return row;
}

async function auditOf(alertId: string) {
	return db
		.select()
		.from(auditEvents)
		.where(and(eq(auditEvents.subjectType, 'alert'), eq(auditEvents.subjectId, alertId)))
		.orderBy(asc(auditEvents.id));
}

async function alertRow(id: string) {
	const [row] = await db.select().from(alerts).where(eq(alerts.id, id));
	return row;
}

async function ack(who: Member, f: Fixture, alertId: string, body: unknown): Promise<Response> {
	const params = { workshop: f.ws, alertId };
	return ackApi.POST(apiEvent<AckEvent>(who, `/api/w/${f.ws}/alerts/${alertId}/ack`, params, { method: 'POST', body }));
}

/** The status of a handler's answer, whether returned or thrown (SvelteKit's error()). */
async function statusOf(run: () => unknown): Promise<number> {
	try {
		return ((await run()) as Response).status;
	} catch (e) {
		return (e as { status: number }).status;
	}
}

/** A second pack (and running session) in the fixture's workshop, owned by `packOwner`. */
async function secondPack(f: Fixture, packOwner: Member) {
	const made = await createPack(f.owner, {
		name: 'Viewer’s pack',
		cellSpecId: f.pack.cellSpecId,
		series: 2,
		parallel: 1,
		bmsFitted: false,
		bmsBalanceAmps: null,
		status: 'building',
		packOwnerId: packOwner.user.id,
		measuredPeakAmps: null,
		measuredPeakNote: '',
		notes: ''
	});
	if (!made.ok) throw new Error(made.message);
	const session = await addSession(f.owner, made.pack.id);
	return { owner: f.owner, pack: made.pack, session };
}

describe('the alerts inbox', () => {
	it('lists needing attention first, then critical, warning, information, then newest first', async () => {
		const f = await sessionFixture();
		// Opened in an order that differs from the severity order: the newest is the least serious.
		const info = await insertAlert(f, { severity: 'info', openedAt: minutesAgo(15), title: 'Step done' });
		const warning = await insertAlert(f, { severity: 'warning', openedAt: minutesAgo(20) });
		const olderCritical = await insertAlert(f, { severity: 'critical', openedAt: minutesAgo(50), groupId: f.groups[0].id });
		const newerCritical = await insertAlert(f, { severity: 'critical', openedAt: minutesAgo(30), groupId: f.groups[1].id });
		// The newest and most serious, but acknowledged: after everything still needing attention.
		const done = await insertAlert(f, {
			severity: 'critical',
			openedAt: minutesAgo(5),
			acknowledgedAt: minutesAgo(4),
			acknowledgedBy: f.owner.user.id,
			ackNote: 'charger off'
		});

		const all = await listAlerts(f.owner);
		expect(all.map((a) => a.id)).toEqual([newerCritical.id, olderCritical.id, warning.id, info.id, done.id]);
		expect(all[0]).toMatchObject({ groupIndex: 2, packName: 'Test pack', sessionName: f.session.name, acknowledgedBy: null });
		expect(all[4].acknowledgedBy).toEqual({ id: f.owner.user.id, name: f.owner.user.name });

		expect((await listAlerts(f.owner, { status: 'open' })).map((a) => a.id)).toEqual([newerCritical.id, olderCritical.id, warning.id, info.id]);
		expect((await listAlerts(f.owner, { status: 'acknowledged' })).map((a) => a.id)).toEqual([done.id]);
		expect((await listAlerts(f.owner, { status: 'open', limit: 2 })).map((a) => a.id)).toEqual([newerCritical.id, olderCritical.id]);
		expect((await listAlerts(f.owner, { before: minutesAgo(25) })).map((a) => a.id)).toEqual([newerCritical.id, olderCritical.id]);

		// One session's alerts only.
		const other = await addSession(f.owner, f.pack.id, 'done');
		const elsewhere = await insertAlert({ ...f, session: other }, { severity: 'critical' });
		expect((await listAlerts(f.owner, { sessionId: other.id })).map((a) => a.id)).toEqual([elsewhere.id]);

		// The layout's summary: five need attention, the three critical ones newest first with the first sentence of what to do.
		const summary = await alertSummary(f.owner);
		expect(summary.needAttention).toBe(5);
		expect(summary.critical.map((c) => c.id)).toEqual([elsewhere.id, newerCritical.id, olderCritical.id]);
		expect(summary.critical[0]).toEqual({ id: elsewhere.id, title: elsewhere.title, sessionId: other.id, action: 'Disconnect the charger from group 2.' });

		// The API answers the same list, and refuses a bad query with a 400 naming the parameter.
		const answer = await listApi.GET(apiEvent<ListEvent>(f.owner, `/api/w/${f.ws}/alerts?status=open&limit=3`, { workshop: f.ws }));
		expect(answer.status).toBe(200);
		const body = (await answer.json()) as { alerts: { id: string; openedAt: string }[] };
		expect(body.alerts.map((a) => a.id)).toEqual([elsewhere.id, newerCritical.id, olderCritical.id]);
		expect(new Date(body.alerts[0].openedAt).getTime()).toBe(elsewhere.openedAt.getTime());
		for (const query of ['status=closed', 'limit=0', 'limit=abc', 'before=yesterday', 'sessionId=nope']) {
			const bad = await listApi.GET(apiEvent<ListEvent>(f.owner, `/api/w/${f.ws}/alerts?${query}`, { workshop: f.ws }));
			expect(bad.status, query).toBe(400);
			expect(((await bad.json()) as { errors: { path: string }[] }).errors[0].path).toBe(query.split('=')[0]);
		}
	});

	it('shows a viewer only the alerts of packs they own, and hides the rest as not found', async () => {
		const f = await sessionFixture();
		const viewer = await joinAs(f.owner, 'viewer');
		const theirs = await secondPack(f, viewer);
		const mine = await insertAlert(theirs, { severity: 'critical' });
		const notTheirs = await insertAlert(f, { severity: 'critical' });

		expect((await listAlerts(viewer)).map((a) => a.id)).toEqual([mine.id]);
		expect((await listAlerts(f.owner)).map((a) => a.id).sort()).toEqual([mine.id, notTheirs.id].sort());
		expect(await getAlert(viewer, notTheirs.id)).toBeNull();
		expect((await getAlert(viewer, mine.id))?.canAcknowledge).toBe(false);
		expect(await alertSummary(viewer)).toMatchObject({ needAttention: 1, critical: [{ id: mine.id }] });
		expect((await alertSummary(f.owner)).needAttention).toBe(2);

		const get = (who: Member, id: string) => () =>
			alertApi.GET(apiEvent<GetEvent>(who, `/api/w/${f.ws}/alerts/${id}`, { workshop: f.ws, alertId: id }));
		expect(await statusOf(get(viewer, notTheirs.id))).toBe(404);
		expect(await statusOf(get(viewer, mine.id))).toBe(200);
	});

	it('gives the alert page the reading and the deliveries', async () => {
		const f = await sessionFixture();
		const tech = await joinAs(f.owner, 'technician');
		const alert = await insertAlert(f, { severity: 'critical', groupId: f.groups[1].id });
		const log = [
			{ at: minutesAgo(9).toISOString(), ok: false, detail: 'mail server refused the connection' },
			{ at: minutesAgo(8).toISOString(), ok: true, detail: '250 accepted' }
		];
		await db.insert(alertDeliveries).values([
			{ id: newId(), alertId: alert.id, userId: f.owner.user.id, channel: 'email', reason: 'watcher', status: 'sent', attempts: 2, log, sentAt: minutesAgo(8) },
			{ id: newId(), alertId: alert.id, userId: tech.user.id, channel: 'push', reason: 'on-watch', status: 'pending' }
		]);
		const detail = await getAlert(tech, alert.id);
		expect(detail).toMatchObject({ id: alert.id, groupIndex: 2, canAcknowledge: true, value: 4.31, threshold: 4.25, unit: 'V' });
		expect(detail!.deliveries.map((d) => [d.userName, d.channel, d.reason, d.status, d.attempts])).toEqual(
			expect.arrayContaining([
				[f.owner.user.name, 'email', 'watcher', 'sent', 2],
				[tech.user.name, 'push', 'on-watch', 'pending', 0]
			])
		);
		expect(detail!.deliveries.find((d) => d.channel === 'email')?.log).toEqual(log);
	});
});

describe('acknowledging an alert', () => {
	it('records who, when and the note, writes the audit row and tells the session’s live views', async () => {
		const f = await sessionFixture();
		const tech = await joinAs(f.owner, 'technician');
		const alert = await insertAlert(f, { severity: 'critical', groupId: f.groups[0].id });
		const heard: { sessionId: string; kind: string }[] = [];
		const listening = await sqlClient().listen(SESSION_EVENTS_CHANNEL, (payload) => heard.push(JSON.parse(payload)));
		try {
			const answer = await ack(tech, f, alert.id, { note: 'Charger off.\nGroup 1 cooling on the tray.' });
			expect(answer.status).toBe(200);
			const body = (await answer.json()) as { alert: { id: string; acknowledgedBy: { name: string }; ackNote: string } };
			expect(body.alert).toMatchObject({ id: alert.id, acknowledgedBy: { name: tech.user.name }, ackNote: 'Charger off.\nGroup 1 cooling on the tray.' });
			for (let i = 0; i < 50 && !heard.some((e) => e.sessionId === f.session.id); i++) await new Promise((r) => setTimeout(r, 20));
			expect(heard.filter((e) => e.sessionId === f.session.id).map((e) => e.kind)).toEqual(['alert']);
		} finally {
			await listening.unlisten();
		}
		const row = await alertRow(alert.id);
		expect(row.acknowledgedBy).toBe(tech.user.id);
		expect(row.acknowledgedAt).toBeInstanceOf(Date);
		expect(Math.abs(row.acknowledgedAt!.getTime() - Date.now())).toBeLessThan(60_000);
		const audit = await auditOf(alert.id);
		expect(audit).toHaveLength(1);
		expect(audit[0]).toMatchObject({
			kind: 'alert.acknowledge',
			actorId: tech.user.id,
			actorLabel: tech.user.name,
			workshopId: f.owner.workshop.id,
			packId: f.pack.id,
			sessionId: f.session.id,
			before: { acknowledgedAt: null, acknowledgedBy: null, ackNote: '' },
			after: { acknowledgedAt: row.acknowledgedAt!.toISOString(), acknowledgedBy: tech.user.id, ackNote: 'Charger off.\nGroup 1 cooling on the tray.' }
		});
		// It no longer needs attention: off the red strip and the count.
		expect(await alertSummary(f.owner)).toEqual({ needAttention: 0, critical: [] });
	});

	it('refuses a second acknowledgement with 409 naming who and when, and changes nothing', async () => {
		const f = await sessionFixture();
		const tech = await joinAs(f.owner, 'technician');
		const alert = await insertAlert(f, { severity: 'warning' });
		expect((await acknowledgeAlert(tech, alert.id, 'first')).ok).toBe(true);
		const before = await alertRow(alert.id);

		const again = await ack(f.owner, f, alert.id, { note: 'second' });
		expect(again.status).toBe(409);
		const body = (await again.json()) as { message: string; reason: string; acknowledged: { by: string; at: string } };
		expect(body.reason).toBe('already-acknowledged');
		expect(body.message).toMatch(new RegExp(`already acknowledged by ${tech.user.name} at \\d\\d:\\d\\d`));
		expect(body.acknowledged).toEqual({ by: tech.user.name, at: before.acknowledgedAt!.toISOString() });

		expect(await alertRow(alert.id)).toEqual(before);
		expect(await auditOf(alert.id)).toHaveLength(1);
	});

	it('lets exactly one of several acknowledgements at the same moment through', async () => {
		const f = await sessionFixture();
		const people = [f.owner, await joinAs(f.owner, 'technician'), await joinAs(f.owner, 'builder'), await joinAs(f.owner, 'technician')];
		const alert = await insertAlert(f, { severity: 'critical' });
		const results = await Promise.all(people.map((p, i) => acknowledgeAlert(p, alert.id, `note ${i}`)));
		const winners = results.flatMap((r, i) => (r.ok ? [i] : []));
		expect(winners).toHaveLength(1);
		expect(results.filter((r) => !r.ok).map((r) => !r.ok && r.status)).toEqual([409, 409, 409]);
		const row = await alertRow(alert.id);
		expect(row.acknowledgedBy).toBe(people[winners[0]].user.id);
		expect(row.ackNote).toBe(`note ${winners[0]}`);
		expect(await auditOf(alert.id)).toHaveLength(1);
	});

	it('refuses a viewer (403), another workshop’s alert (404) and hostile notes (400), writing nothing', async () => {
		const f = await sessionFixture();
		const viewer = await joinAs(f.owner, 'viewer');
		const theirs = await secondPack(f, viewer);
		const viewersAlert = await insertAlert(theirs, { severity: 'critical' });
		const alert = await insertAlert(f, { severity: 'critical' });
		const stranger = await sessionFixture();
		const strangersAlert = await insertAlert(stranger, { severity: 'critical' });

		// A viewer may see the alert of their own pack, but not acknowledge it.
		expect(await statusOf(() => ack(viewer, f, viewersAlert.id, {}))).toBe(403);
		await expect(acknowledgeAlert(viewer, viewersAlert.id)).rejects.toMatchObject({ status: 403 });

		// Another workshop's alert through this workshop's URL, and its own URL by a non-member.
		expect((await ack(f.owner, f, strangersAlert.id, {})).status).toBe(404);
		expect(await acknowledgeAlert(f.owner, strangersAlert.id)).toMatchObject({ ok: false, status: 404 });
		expect(await statusOf(() => ack(f.owner, stranger, strangersAlert.id, {}))).toBe(404);

		// Hostile or malformed bodies.
		for (const note of ['\u0000', 'ok\u0007', '\u001b[31mred', '\u007f', 'a\u0085b', 'x'.repeat(501)]) {
			const answer = await ack(f.owner, f, alert.id, { note });
			expect(answer.status, JSON.stringify(note)).toBe(400);
			expect(((await answer.json()) as { errors: { path: string }[] }).errors[0].path).toBe('note');
		}
		for (const body of ['not json', '[]', '{"note": 5}']) {
			expect((await ack(f.owner, f, alert.id, body)).status).toBe(400);
		}
		const asForm = await ackApi.POST({
			...apiEvent<AckEvent>(f.owner, `/api/w/${f.ws}/alerts/${alert.id}/ack`, { workshop: f.ws, alertId: alert.id }),
			request: new Request(`http://127.0.0.1/api/w/${f.ws}/alerts/${alert.id}/ack`, { method: 'POST', body: 'note=hi', headers: { 'content-type': 'application/x-www-form-urlencoded' } })
		} as AckEvent);
		expect(asForm.status).toBe(415);

		// The page's form action refuses the same note with a 400 and a plain message.
		const form = new FormData();
		form.append('note', 'bad\u0000note');
		const url = new URL(`http://127.0.0.1/w/${f.ws}/alerts/${alert.id}`);
		const action = (await alertPage.actions.acknowledge({
			locals: { user: f.owner.user, session: null },
			params: { workshop: f.ws, alertId: alert.id },
			url,
			request: new Request(url, { method: 'POST', body: form })
		} as never)) as { status: number; data: { message: string } };
		expect(action.status).toBe(400);
		expect(action.data.message).toMatch(/control characters/);

		for (const id of [alert.id, viewersAlert.id, strangersAlert.id]) {
			expect((await alertRow(id)).acknowledgedAt).toBeNull();
			expect(await auditOf(id)).toHaveLength(0);
		}

		// And a plain note through the form action works.
		const okForm = new FormData();
		okForm.append('note', '');
		const done = (await alertPage.actions.acknowledge({
			locals: { user: f.owner.user, session: null },
			params: { workshop: f.ws, alertId: alert.id },
			url,
			request: new Request(url, { method: 'POST', body: okForm })
		} as never)) as { done?: string };
		expect(done.done).toMatch(/Acknowledged/);
		expect((await alertRow(alert.id)).acknowledgedBy).toBe(f.owner.user.id);
	});
});
