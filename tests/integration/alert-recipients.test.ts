/**
 * Who is told of a session's alerts (default watchers, added, taken off, the technician on watch),
 * who may change that, and each member's own alert settings and the workshop's escalation time.
 */
import { randomUUID } from 'node:crypto';
import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { escalationSchema } from '$lib/schemas/alert-settings';
import { listWatchers, sessionRecipients, setWatcher, workshopOwners, type Recipient } from '$lib/server/alerts/recipients';
import type { Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { auditEvents, chargeSessions, memberships, packs, pushSubscriptions, sessionWatchers, workshops } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { removeMember } from '$lib/server/workshops-members';
import * as settingsApi from '../../src/routes/api/w/[workshop=slug]/alert-settings/+server';
import * as watchersApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/watchers/+server';
import * as settingsPage from '../../src/routes/(app)/w/[workshop=slug]/alerts/settings/+page.server';
import * as workshopPage from '../../src/routes/(app)/w/[workshop=slug]/workshop/+page.server';
import { apiEvent, joinAs, memberOf, packFixture } from './helpers';
import { addSession } from './readings-fixture';

type WatchersEvent = Parameters<typeof watchersApi.POST>[0];
type SettingsEvent = Parameters<typeof settingsApi.PATCH>[0];
type Problem = { message: string; reason?: string; errors?: { path: string; message: string }[] };

/** A workshop with one person of each kind, a pack owned by the viewer, and a running session planned by the builder. */
async function people() {
	const { owner, pack } = await packFixture({ series: 4, parallel: 1 });
	const [coOwner, builder, tech, otherTech, viewer, otherViewer] = await Promise.all([
		joinAs(owner, 'owner'),
		joinAs(owner, 'builder'),
		joinAs(owner, 'technician'),
		joinAs(owner, 'technician'),
		joinAs(owner, 'viewer'),
		joinAs(owner, 'viewer')
	]);
	await db.update(packs).set({ packOwnerId: viewer.user.id }).where(eq(packs.id, pack.id));
	const created = await addSession(owner, pack.id, 'running');
	const [session] = await db
		.update(chargeSessions)
		.set({ createdBy: builder.user.id, watchUserId: tech.user.id })
		.where(eq(chargeSessions.id, created.id))
		.returning();
	const ws = owner.workshop.slug;
	return { owner, coOwner, builder, tech, otherTech, viewer, otherViewer, pack, session, ws };
}

type People = Awaited<ReturnType<typeof people>>;

const byUser = <T extends { userId: string }>(list: T[]) => new Map(list.map((r) => [r.userId, r]));

async function watcherIds(who: Member, sessionId: string) {
	const result = await listWatchers(who, sessionId);
	if (!result.ok) throw new Error(result.message);
	return result.watchers.map((w) => w.userId).sort();
}

function post(p: People, who: Member, body: unknown) {
	const path = `/api/w/${p.ws}/sessions/${p.session.id}/watchers`;
	return watchersApi.POST(apiEvent<WatchersEvent>(who, path, { workshop: p.ws, sessionId: p.session.id }, { method: 'POST', body }));
}

/** The status of an answer that may have been thrown (SvelteKit's error()) rather than returned. */
async function statusOf(run: () => Response | Promise<Response>): Promise<number> {
	try {
		return (await run()).status;
	} catch (e) {
		const status = (e as { status?: number }).status;
		if (typeof status !== 'number') throw e;
		return status;
	}
}

describe('a session’s watchers', () => {
	let p: People;
	beforeAll(async () => {
		p = await people();
	});

	it('are by default the owners, the builder who planned it, the technician on watch and the pack’s owner', async () => {
		const { timeZone, recipients } = await sessionRecipients(db, p.session.id);
		expect(timeZone).toBe('Europe/Berlin');
		const found = byUser(recipients);
		expect([...found.keys()].sort()).toEqual(
			[p.owner, p.coOwner, p.builder, p.tech, p.viewer].map((m) => m.user.id).sort()
		);
		expect(found.get(p.owner.user.id)?.reasons).toEqual(['owner']);
		expect(found.get(p.builder.user.id)?.reasons).toEqual(['planner']);
		expect(found.get(p.tech.user.id)).toMatchObject({ reasons: ['on-watch'], onWatch: true, role: 'technician' });
		expect(found.get(p.viewer.user.id)?.reasons).toEqual(['pack-owner']);
		// Nobody else is on watch; the other technician and the other viewer are not told.
		expect(recipients.filter((r) => r.onWatch).map((r) => r.userId)).toEqual([p.tech.user.id]);
		expect(found.has(p.otherTech.user.id)).toBe(false);
		expect(found.has(p.otherViewer.user.id)).toBe(false);
		// Channels as the memberships' defaults; the address is the person's.
		expect(found.get(p.builder.user.id)).toMatchObject({
			email: p.builder.user.email,
			name: p.builder.user.name,
			emailAlerts: true,
			pushAlerts: true,
			quietFrom: null,
			quietTo: null,
			hasPushDevice: false
		});
	});

	it('carry each person’s channels, quiet time and whether they have a device for push', async () => {
		await db
			.update(memberships)
			.set({ emailAlerts: false, quietFrom: '22:30', quietTo: '06:45' })
			.where(and(eq(memberships.workshopId, p.owner.workshop.id), eq(memberships.userId, p.coOwner.user.id)));
		await db.insert(pushSubscriptions).values({
			id: newId(),
			userId: p.coOwner.user.id,
			endpoint: `https://push.example.test/${randomUUID()}`,
			p256dh: 'B'.repeat(87),
			auth: 'a'.repeat(22)
		});
		const found = byUser((await sessionRecipients(db, p.session.id)).recipients);
		expect(found.get(p.coOwner.user.id)).toMatchObject({
			emailAlerts: false,
			pushAlerts: true,
			quietFrom: '22:30',
			quietTo: '06:45',
			hasPushDevice: true
		});
		expect(found.get(p.owner.user.id)?.hasPushDevice).toBe(false);

		const owners: Recipient[] = await workshopOwners(db, p.owner.workshop.id);
		expect(owners.map((o) => o.userId).sort()).toEqual([p.owner.user.id, p.coOwner.user.id].sort());
		expect(owners.every((o) => o.reasons.join() === 'owner' && !o.onWatch)).toBe(true);
		expect(byUser(owners).get(p.coOwner.user.id)?.hasPushDevice).toBe(true);
	});

	it('gain an added technician and lose a removed owner, each change in the audit trail', async () => {
		const added = await post(p, p.builder, { userId: p.otherTech.user.id, watching: true });
		expect(added.status).toBe(200);
		const addedList = ((await added.json()) as { watchers: { userId: string; reasons: string[] }[] }).watchers;
		expect(byUser(addedList).get(p.otherTech.user.id)?.reasons).toEqual(['added']);

		const removed = await post(p, p.builder, { userId: p.coOwner.user.id, watching: false });
		expect(removed.status).toBe(200);
		const ids = await watcherIds(p.owner, p.session.id);
		expect(ids).toContain(p.otherTech.user.id);
		expect(ids).not.toContain(p.coOwner.user.id);
		const recipients = byUser((await sessionRecipients(db, p.session.id)).recipients);
		expect(recipients.has(p.coOwner.user.id)).toBe(false);
		expect(recipients.get(p.otherTech.user.id)?.onWatch).toBe(false);

		const audit = await db
			.select()
			.from(auditEvents)
			.where(and(eq(auditEvents.sessionId, p.session.id), eq(auditEvents.kind, 'watchers.change')));
		expect(audit.map((a) => [a.actorId, a.after?.userId, a.before?.watching, a.after?.watching])).toEqual(
			expect.arrayContaining([
				[p.builder.user.id, p.otherTech.user.id, false, true],
				[p.builder.user.id, p.coOwner.user.id, true, false]
			])
		);

		// Asking for what already is changes nothing and records nothing.
		expect((await post(p, p.builder, { userId: p.coOwner.user.id, watching: false })).status).toBe(200);
		const again = await db
			.select()
			.from(auditEvents)
			.where(and(eq(auditEvents.sessionId, p.session.id), eq(auditEvents.kind, 'watchers.change')));
		expect(again).toHaveLength(audit.length);

		// Adding the owner back restores the default: told as an owner, no row left behind.
		expect((await post(p, p.owner, { userId: p.coOwner.user.id, watching: true })).status).toBe(200);
		const back = await listWatchers(p.owner, p.session.id);
		expect(back.ok && byUser(back.watchers).get(p.coOwner.user.id)?.reasons).toEqual(['owner']);
		const rows = await db
			.select()
			.from(sessionWatchers)
			.where(and(eq(sessionWatchers.sessionId, p.session.id), eq(sessionWatchers.userId, p.coOwner.user.id)));
		expect(rows).toHaveLength(0);
	});

	it('always include the technician on watch, who cannot be taken off', async () => {
		const refused = await post(p, p.owner, { userId: p.tech.user.id, watching: false });
		expect(refused.status).toBe(409);
		const body = (await refused.json()) as Problem;
		expect(body.reason).toBe('on-watch');
		expect(body.message).toMatch(/always told .* while on watch/);

		// Even a row written by another path that takes them off does not silence them while on watch.
		await db
			.insert(sessionWatchers)
			.values({ sessionId: p.session.id, workshopId: p.owner.workshop.id, userId: p.tech.user.id, watching: false });
		const found = byUser((await sessionRecipients(db, p.session.id)).recipients);
		expect(found.get(p.tech.user.id)).toMatchObject({ onWatch: true });
		expect(found.get(p.tech.user.id)?.reasons).toContain('on-watch');
	});

	it('are changed only by those who may plan, and only to members who may see the session', async () => {
		for (const who of [p.tech, p.viewer]) {
			expect(await statusOf(() => post(p, who, { userId: p.otherTech.user.id, watching: false }))).toBe(403);
			await expect(setWatcher(who, p.session.id, p.otherTech.user.id, false)).rejects.toMatchObject({ status: 403 });
		}
		expect(await watcherIds(p.owner, p.session.id)).toContain(p.otherTech.user.id);

		const stranger = await packFixture({ series: 2, parallel: 1 });
		const notMember = await post(p, p.owner, { userId: stranger.owner.user.id, watching: true });
		expect(notMember.status).toBe(400);
		expect(((await notMember.json()) as Problem).errors?.[0].path).toBe('userId');

		// A viewer sees only the packs they own, so one who does not own this pack cannot watch it.
		const blind = await post(p, p.owner, { userId: p.otherViewer.user.id, watching: true });
		expect(blind.status).toBe(400);
		expect(((await blind.json()) as Problem).message).toMatch(/viewer/);

		// Not JSON, or not the right shape.
		const path = `/api/w/${p.ws}/sessions/${p.session.id}/watchers`;
		const params = { workshop: p.ws, sessionId: p.session.id };
		const form = await watchersApi.POST(apiEvent<WatchersEvent>(p.owner, path, params, { method: 'POST', body: 'userId=x' }));
		expect(form.status).toBe(400); // sent with the JSON header but not JSON
		const plain = apiEvent<WatchersEvent>(p.owner, path, params);
		Object.assign(plain, { request: new Request(plain.url, { method: 'POST', body: '{}', headers: { 'content-type': 'text/plain' } }) });
		expect((await watchersApi.POST(plain)).status).toBe(415);
		expect((await post(p, p.owner, { userId: p.otherTech.user.id, watching: 'yes' })).status).toBe(400);

		// Another workshop's session is not found, for reading and for changing.
		const theirSession = await addSession(stranger.owner, stranger.pack.id);
		expect((await listWatchers(p.owner, theirSession.id)).ok).toBe(false);
		const foreign = await watchersApi.POST(
			apiEvent<WatchersEvent>(p.owner, path, { workshop: p.ws, sessionId: theirSession.id }, {
				method: 'POST',
				body: { userId: p.owner.user.id, watching: true }
			})
		);
		expect(foreign.status).toBe(404);
		// The pack's owner (a viewer) may read the list of their own pack's session.
		expect(await watcherIds(p.viewer, p.session.id)).toContain(p.viewer.user.id);
		expect((await listWatchers(p.otherViewer, p.session.id)).ok).toBe(false);
	});

	it('lose a member who leaves the workshop, with their watcher row', async () => {
		const q = await people();
		await setWatcher(q.owner, q.session.id, q.otherTech.user.id, true);
		expect(await watcherIds(q.owner, q.session.id)).toContain(q.otherTech.user.id);
		expect((await removeMember(q.owner, q.otherTech.user.id)).ok).toBe(true);
		expect((await removeMember(q.owner, q.viewer.user.id)).ok).toBe(true);
		const left = byUser((await sessionRecipients(db, q.session.id)).recipients);
		expect(left.has(q.otherTech.user.id)).toBe(false);
		expect(left.has(q.viewer.user.id)).toBe(false);
		const rows = await db.select().from(sessionWatchers).where(eq(sessionWatchers.sessionId, q.session.id));
		expect(rows.map((r) => r.userId)).not.toContain(q.otherTech.user.id);
		// The technician on watch who leaves is no longer on watch nor told.
		expect((await removeMember(q.owner, q.tech.user.id)).ok).toBe(true);
		const after = (await sessionRecipients(db, q.session.id)).recipients;
		expect(after.some((r) => r.userId === q.tech.user.id || r.onWatch)).toBe(false);
		expect(after.map((r) => r.userId).sort()).toEqual([q.owner, q.coOwner, q.builder].map((m) => m.user.id).sort());
	});
});

describe('a member’s alert settings', () => {
	let p: People;
	beforeAll(async () => {
		p = await people();
	});

	const patch = (who: Member, body: unknown, type = 'application/json') => {
		const event = apiEvent<SettingsEvent>(who, `/api/w/${p.ws}/alert-settings`, { workshop: p.ws }, { method: 'PATCH', body });
		if (type !== 'application/json') {
			Object.assign(event, { request: new Request(event.url, { method: 'PATCH', body: JSON.stringify(body), headers: { 'content-type': type } }) });
		}
		return settingsApi.PATCH(event);
	};
	const mine = async (who: Member) =>
		(
			await db
				.select()
				.from(memberships)
				.where(and(eq(memberships.workshopId, who.workshop.id), eq(memberships.userId, who.user.id)))
		)[0];

	it('change only the keys sent', async () => {
		const set = await patch(p.tech, { quietFrom: '22:00', quietTo: '06:30', pushAlerts: false });
		expect(set.status).toBe(200);
		expect(await mine(p.tech)).toMatchObject({ quietFrom: '22:00', quietTo: '06:30', pushAlerts: false, emailAlerts: true });

		const only = await patch(p.tech, { emailAlerts: false });
		expect(only.status).toBe(200);
		expect(((await only.json()) as { settings: unknown }).settings).toEqual({
			emailAlerts: false,
			pushAlerts: false,
			quietFrom: '22:00',
			quietTo: '06:30'
		});
		expect(await mine(p.tech)).toMatchObject({ quietFrom: '22:00', quietTo: '06:30', pushAlerts: false, emailAlerts: false });

		// Both null turns quiet time off; someone else's settings never move.
		expect((await patch(p.tech, { quietFrom: null, quietTo: null })).status).toBe(200);
		expect(await mine(p.tech)).toMatchObject({ quietFrom: null, quietTo: null, emailAlerts: false });
		expect(await mine(p.builder)).toMatchObject({ emailAlerts: true, pushAlerts: true, quietFrom: null });
	});

	it('refuse a half quiet time, a bad time, control characters and unknown keys, changing nothing', async () => {
		await patch(p.builder, { quietFrom: '21:00', quietTo: '07:00' });
		const before = await mine(p.builder);
		const bad: [unknown, string][] = [
			[{ quietFrom: '23:00' }, 'quietTo'],
			[{ quietTo: '05:00', emailAlerts: false }, 'quietFrom'],
			[{ quietFrom: '23:00', quietTo: null }, 'quietTo'],
			[{ quietFrom: '24:00', quietTo: '05:00' }, 'quietFrom'],
			[{ quietFrom: '7:00', quietTo: '05:00' }, 'quietFrom'],
			[{ quietFrom: '22:00', quietTo: '22:00' }, 'quietTo'],
			[{ quietFrom: '22:00\u0000', quietTo: '05:00' }, 'quietFrom'],
			[{ quietFrom: '22\u001b:00', quietTo: '05:00' }, 'quietFrom'],
			[{ emailAlerts: 'no' }, 'emailAlerts'],
			[{ quietTime: '22:00-05:00' }, '']
		];
		for (const [body, path] of bad) {
			const answer = await patch(p.builder, body);
			expect(answer.status, JSON.stringify(body)).toBe(400);
			const problem = (await answer.json()) as Problem;
			expect(problem.errors?.map((e) => e.path), JSON.stringify(body)).toContain(path);
		}
		const control = (await (await patch(p.builder, { quietFrom: '22:00\u0000', quietTo: '05:00' })).json()) as Problem;
		expect(control.errors?.[0].message).toMatch(/control characters/);
		expect((await patch(p.builder, { emailAlerts: false }, 'text/plain')).status).toBe(415);
		expect(await mine(p.builder)).toEqual(before);
	});

	it('are saved by the settings page’s form, with its errors beside the fields', async () => {
		const path = `/w/${p.ws}/alerts/settings`;
		const submit = (who: Member, fields: Record<string, string>) => {
			const form = new FormData();
			for (const [k, v] of Object.entries(fields)) form.append(k, v);
			const url = new URL(`http://127.0.0.1${path}`);
			return settingsPage.actions.save({
				locals: { user: who.user, session: null },
				params: { workshop: p.ws },
				url,
				request: new Request(url, { method: 'POST', body: form })
			} as never) as Promise<{ status?: number; data?: { form: { errors: Record<string, string[]> } } } | { form: unknown }>;
		};
		const half = await submit(p.viewer, { emailAlerts: 'on', quietFrom: '23:00', quietTo: '' });
		expect(half).toMatchObject({ status: 400 });
		expect((half as { data: { form: { errors: Record<string, string[]> } } }).data.form.errors.quietTo?.[0]).toMatch(/both/);
		expect(await mine(p.viewer)).toMatchObject({ quietFrom: null, emailAlerts: true, pushAlerts: true });

		// A checkbox left unticked is not sent: push off. Empty times: no quiet time.
		await submit(p.viewer, { emailAlerts: 'on', quietFrom: '23:15', quietTo: '06:00' });
		expect(await mine(p.viewer)).toMatchObject({ emailAlerts: true, pushAlerts: false, quietFrom: '23:15', quietTo: '06:00' });
		await submit(p.viewer, { pushAlerts: 'on', quietFrom: '', quietTo: '' });
		expect(await mine(p.viewer)).toMatchObject({ emailAlerts: false, pushAlerts: true, quietFrom: null, quietTo: null });
	});
});

describe('the workshop’s escalation time', () => {
	it('accepts whole minutes from 1 to 240 (10 by default), from owners only', async () => {
		const { owner } = await packFixture({ series: 2, parallel: 1 });
		const builder = await joinAs(owner, 'builder');
		const stored = async () => (await db.select().from(workshops).where(eq(workshops.id, owner.workshop.id)))[0].escalationMinutes;
		expect(await stored()).toBe(10);

		for (const bad of [0, 241, 2.5, -5, Number.NaN]) {
			expect(escalationSchema.safeParse({ escalationMinutes: bad }).success, String(bad)).toBe(false);
		}
		for (const good of [1, 240]) expect(escalationSchema.safeParse({ escalationMinutes: good }).success).toBe(true);

		const ws = owner.workshop.slug;
		const submit = (who: Member, minutes: string) => {
			const form = new FormData();
			form.append('escalationMinutes', minutes);
			form.append('__superform_id', 'escalation');
			const url = new URL(`http://127.0.0.1/w/${ws}/workshop`);
			return workshopPage.actions.escalation({
				locals: { user: who.user, session: null },
				params: { workshop: ws },
				url,
				request: new Request(url, { method: 'POST', body: form })
			} as never);
		};
		for (const bad of ['0', '241', '15.5', 'ten']) {
			expect(await submit(owner, bad), bad).toMatchObject({ status: 400 });
		}
		expect(await stored()).toBe(10);
		await submit(owner, '240');
		expect(await stored()).toBe(240);
		await submit(owner, '1');
		expect(await stored()).toBe(1);
		await expect(submit(builder, '30')).rejects.toMatchObject({ status: 403 });
		expect(await stored()).toBe(1);

		// The database holds the same bounds on any other path.
		await expect(db.update(workshops).set({ escalationMinutes: 241 }).where(eq(workshops.id, owner.workshop.id))).rejects.toThrow();
		// A member read afresh sees the stored value (what the escalation job reads).
		expect((await memberOf(owner.user.id, ws)).workshop.escalationMinutes).toBe(1);
	});
});
