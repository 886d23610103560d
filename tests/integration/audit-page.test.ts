/**
 * The audit page's load against a real PostgreSQL: a stop with its reason, an acknowledgement
 * with its note, an edited reading before and after, the filters, the pages, and 403 for everyone
 * but an owner.
 */
import { eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import type { Member } from '$lib/server/auth/permissions';
import { acknowledgeAlert } from '$lib/server/alerts/inbox';
import { db } from '$lib/server/db';
import { alerts, auditEvents, readings } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { stopSession } from '$lib/server/sessions/core';
import { editReading, logReadings } from '$lib/server/sessions/readings';
import { load } from '../../src/routes/(app)/w/[workshop=slug]/workshop/audit/+page.server';
import { joinAs } from './helpers';
import { addSession, sessionFixture } from './readings-fixture';

type LoadEvent = Parameters<typeof load>[0];
type PageData = Awaited<ReturnType<typeof load>>;

async function openAudit(who: Member, query = ''): Promise<PageData | { status: number; message: string }> {
	const url = new URL(`http://127.0.0.1/w/${who.workshop.slug}/workshop/audit${query}`);
	try {
		return (await load({ locals: { user: who.user, session: null }, params: { workshop: who.workshop.slug }, url } as unknown as LoadEvent)) as PageData;
	} catch (e) {
		const thrown = e as { status?: number; body?: { message: string } };
		if (typeof thrown.status === 'number') return { status: thrown.status, message: thrown.body?.message ?? '' };
		throw e;
	}
}

async function page(who: Member, query = ''): Promise<PageData> {
	const result = await openAudit(who, query);
	if ('status' in result) throw new Error(`audit page answered ${result.status}: ${result.message}`);
	return result;
}

/** A session stopped with a reason, an alert acknowledged with a note, a reading edited; and a second session with its own stop. */
async function history() {
	const f = await sessionFixture({ series: 4 });
	const tech = await joinAs(f.owner, 'technician');
	const logged = await logReadings(
		{ kind: 'member', member: tech },
		f.session.id,
		[{ clientId: newId(), groupIndex: 2, takenAt: new Date(Date.now() - 20 * 60_000).toISOString(), volts: 4.21, tempC: 25 }],
		'hand'
	);
	expect(logged).toMatchObject({ ok: true, stored: 1 });
	const [reading] = await db.select({ id: readings.id }).from(readings).where(eq(readings.sessionId, f.session.id));
	expect(await editReading(tech, f.session.id, reading.id, { volts: 4.12 })).toMatchObject({ ok: true });

	const alertId = newId();
	await db.insert(alerts).values({
		id: alertId,
		workshopId: f.owner.workshop.id,
		packId: f.pack.id,
		sessionId: f.session.id,
		groupId: f.groups[1].id,
		groupKey: f.groups[1].id,
		kind: 'over-temperature',
		severity: 'warning',
		title: 'Group 2: too warm',
		message: 'Group 2 is at 46 °C, over the 45 °C limit.',
		value: 46,
		threshold: 45,
		unit: '°C'
	});
	expect(await acknowledgeAlert(tech, alertId, 'Fan on, charger off for group 2.')).toMatchObject({ ok: true });
	expect(await stopSession(tech, f.session.id, 'Group 2 ran warm; stopped to check the welds.')).toMatchObject({ ok: true });

	const other = await addSession(f.owner, f.pack.id, 'running');
	expect(await stopSession(f.owner, other.id, 'Wrong charger on the bench.')).toMatchObject({ ok: true });
	return { ...f, tech, other };
}

describe('audit page', () => {
	it('lists a stop with its reason, an acknowledgement with its note and an edited reading before and after, newest first', async () => {
		const h = await history();
		const data = await page(h.owner);
		const titles = data.events.map((e) => e.title);
		expect(titles[0]).toBe('Session stopped');
		const stop = data.events.find((e) => e.sessionId === h.session.id && e.title === 'Session stopped')!;
		expect(stop.details).toEqual(['Reason: Group 2 ran warm; stopped to check the welds.']);
		expect(stop.who).toBe(h.tech.user.name);
		const ack = data.events.find((e) => e.title.startsWith('Alert acknowledged'))!;
		expect(ack.title).toBe('Alert acknowledged: Group 2: too warm');
		expect(ack.details).toEqual(['Note: “Fan on, charger off for group 2.”']);
		const edit = data.events.find((e) => e.title.includes('reading edited'))!;
		expect(edit.title).toBe('Group 2 reading edited');
		expect(edit.details).toEqual(['volts 4.21 → 4.12']);
		// Newest first: the times never go up.
		const times = data.events.map((e) => new Date(e.at).getTime());
		expect([...times].sort((a, b) => b - a)).toEqual(times);
		expect(data.choices.people.map((p) => p.id).sort()).toEqual([h.owner.user.id, h.tech.user.id].sort());
	});

	it('filters by person, pack, session and kind', async () => {
		const h = await history();
		const bySession = await page(h.owner, `?session=${h.other.id}`);
		expect(bySession.events.map((e) => e.title)).toEqual(['Session stopped']);
		expect(bySession.events[0].details).toEqual(['Reason: Wrong charger on the bench.']);

		const byPerson = await page(h.owner, `?person=${h.owner.user.id}`);
		expect(byPerson.events.map((e) => e.title)).toEqual(['Session stopped']);
		const byTech = await page(h.owner, `?person=${h.tech.user.id}&kind=session.stop`);
		expect(byTech.events.map((e) => e.details[0])).toEqual(['Reason: Group 2 ran warm; stopped to check the welds.']);

		const byKind = await page(h.owner, '?kind=alert.acknowledge');
		expect(byKind.events).toHaveLength(1);
		expect(byKind.filters.kind).toBe('alert.acknowledge');

		expect((await page(h.owner, `?pack=${h.pack.id}&kind=session.stop`)).events).toHaveLength(2);
		expect(await openAudit(h.owner, '?kind=nonsense')).toMatchObject({ status: 400, message: expect.stringMatching(/kind of change/) });
		expect(await openAudit(h.owner, '?before=yesterday')).toMatchObject({ status: 400 });
	});

	it('pages newest first without repeating or skipping an event', async () => {
		const h = await history();
		// 120 more events at one instant (the keyset must also order by id) and a few spread out.
		const same = new Date(Date.now() - 3 * 3_600_000);
		await db.insert(auditEvents).values(
			Array.from({ length: 120 }, (_, i) => ({
				workshopId: h.owner.workshop.id,
				actorId: h.owner.user.id,
				actorLabel: h.owner.user.name,
				kind: 'step.start',
				packId: h.pack.id,
				sessionId: h.session.id,
				subjectType: 'step',
				subjectId: `s${i}`,
				after: { position: i + 1 },
				at: i % 10 === 0 ? new Date(same.getTime() - i * 1000 - 0.5) : same
			}))
		);
		const all = (await db.select({ id: auditEvents.id }).from(auditEvents).where(eq(auditEvents.workshopId, h.owner.workshop.id))).length;
		const seen: number[] = [];
		let query = '';
		for (let n = 0; n < 10; n++) {
			const data = await page(h.owner, query);
			seen.push(...data.events.map((e) => e.id));
			if (!data.next) break;
			query = `?before=${data.next}`;
		}
		expect(seen).toHaveLength(all);
		expect(new Set(seen).size).toBe(all);
	});

	it('is for owners only: a builder, a technician and a viewer get 403 in words', async () => {
		const h = await history();
		for (const role of ['builder', 'technician', 'viewer'] as const) {
			const who = role === 'technician' ? h.tech : await joinAs(h.owner, role);
			expect(await openAudit(who)).toMatchObject({ status: 403, message: expect.stringMatching(/Only an owner can read/) });
		}
	});
});
