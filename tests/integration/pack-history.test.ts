/**
 * The pack history (sessions/history.ts) against the real database: a 3S1P NMC pack (4 Ah cells)
 * with hand-written sessions and readings, written straight into the tables.
 *
 * Session A (done, one group at a time, set 4.20 V): group 1's step 10:00–12:00, group 2's 12:00–14:00.
 *   Group 1 readings: 09:59 3.4193 V (rest, no current) · 10:00:30 3.4693 V 2.0 A · 11:00 4.100 V 2.0 A
 *   · 11:30 4.195 V 1.0 A · 11:55 4.198 V 0.4 A · 12:10 4.150 V (too soon to be rest) · 14:00 4.1121 V
 *   (rest) · 15:00 4.105 V (a later rest reading: not the first).
 *   - Ah (trapezoid, first current held back to 10:00, last held to 12:00):
 *     2.0 × 30 s = 0.016667 · 2.0 × 59.5 min = 1.983333 · (2.0 + 1.0)/2 × 30 min = 0.75
 *     · (1.0 + 0.4)/2 × 25 min = 0.291667 · 0.4 × 5 min = 0.033333 → 3.075 Ah
 *   - CV: first reading ≥ 4.20 − 0.03 = 4.17 V is 11:30 → 30 min to 12:00 = 0.5 h
 *   - end volts 4.198 (11:55); rest after: first at rest ≥ 12:00 + 1 h 45 min → 14:00 4.1121
 *   - capacity: SoC(3.4193) = 0.1357, SoC(4.1121) = 0.9548 (breakpoints of the NMC rest curve, IEEE TIM
 *     2025 — references.md §2) → 3.075 / (0.9548 − 0.1357) = 3.075 / 0.8191 = 3.7541 Ah
 *   - charge resistance: (3.4693 − 3.4193) V / (2.0 − 0) A = 0.025 Ω = 25 mΩ (30 s apart)
 *   - peak °C: 25, 31, 27 → 31
 *   Group 2: 11:59:30 3.4193 V · 12:00:40 3.4793 V 2.0 A · 13:00 4.100 V 2.0 A · 13:40 4.190 V 0.8 A · 16:00 4.0664 V
 *   - Ah: 2.0 × 40 s = 0.022222 · 2.0 × 59 min 20 s = 1.977778 · (2.0 + 0.8)/2 × 40 min = 0.933333
 *     · 0.8 × 20 min = 0.266667 → 3.2 Ah
 *   - CV from 13:40 → 20 min = 0.3333 h; end volts 4.190; rest after 4.0664 (SoC 0.8392)
 *   - capacity 3.2 / (0.8392 − 0.1357) = 3.2 / 0.7035 = 4.5487 Ah; resistance 0.06 / 2.0 = 30 mΩ (70 s apart)
 *   (Group 3 has no step in A: it is not in A.)
 * Session B (done, a day later): the whole pack on the charger, set 12.60 V, 10:00–12:00, no current
 *   logged anywhere (Ah "not logged"). Pack readings 10:30 12.000 V, 11:00 12.525 V (12.525 / 3 = 4.175
 *   ≥ 4.17: CV from 11:00 → 1 h for every group). Group ends 11:50: 4.190, 4.160, 4.190; rest 14:00:
 *   4.120, 4.090, 4.120.
 *   - drift (limit 20 mV; a gap is the group minus the mean of the others): group 2's end gap
 *     4.160 − 4.190 = −30 mV; at A 4.190 − 4.198 = −8 mV: 22 mV more → drifting. Group 1: 4.190 −
 *     (4.160 + 4.190)/2 = +15 mV, at A +8 mV: 7 mV → not. Group 3 has no earlier gap.
 *   - weakest in B (no capacity: by rest volts): group 2, 4.090 − (4.120 + 4.120)/2 = 30 mV lower.
 * Session C (running, now = the next day 10:30): group 1's step from 10:00, one reading 10:10 1.0 A
 *   → Ah 1.0 × 10 min + 1.0 × 20 min (held to now) = 0.5 Ah. A planned session is not listed.
 */
import { randomUUID } from 'node:crypto';
import { asc, eq } from 'drizzle-orm';
import { isHttpError } from '@sveltejs/kit';
import { describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { chargeSessions, packGroups, packs, readings, sessionSteps, type ChargeSession } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { loadPackHistory } from '$lib/server/sessions/history';
import { load as loadHistoryPage } from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/history/+page.server';
import { addPack, joinAs, packFixture } from './helpers';

const MIN = 60_000;
const HOUR = 60 * MIN;
const DAY = 24 * HOUR;
const A = Date.parse('2026-01-10T10:00:00Z');
const B = A + DAY;
const C = A + 5 * DAY;
const at = (base: number, hhmm: string, sec = 0) => {
	const [h, m] = hhmm.split(':').map(Number);
	return base + (h - 10) * HOUR + m * MIN + sec * 1000;
};

async function historyPack() {
	const f = await packFixture({ series: 3, parallel: 1 });
	const groups = await db.select().from(packGroups).where(eq(packGroups.packId, f.pack.id)).orderBy(asc(packGroups.index));
	return { ...f, groups };
}
type Fixture = Awaited<ReturnType<typeof historyPack>>;

async function session(f: Fixture, name: string, status: ChargeSession['status'], start: number, end: number | null) {
	const [s] = await db
		.insert(chargeSessions)
		.values({
			id: newId(),
			workshopId: f.owner.workshop.id,
			packId: f.pack.id,
			name,
			kind: 'one-at-a-time',
			target: 'full',
			setVolts: 4.2,
			plannedStart: new Date(start),
			handsOn: { daily: [{ from: '00:00', to: '23:59' }], once: [] },
			limits: { driftWarningVolts: 0.02 },
			status,
			startedAt: status === 'planned' ? null : new Date(start),
			endedAt: end === null ? null : new Date(end),
			createdBy: f.owner.user.id,
			updatedBy: f.owner.user.id
		})
		.returning();
	return s;
}

async function step(sessionId: string, position: number, groupId: string | null, setVolts: number, from: number, to: number | null) {
	const [s] = await db
		.insert(sessionSteps)
		.values({
			id: newId(),
			sessionId,
			position,
			groupId,
			channelLabel: 'Channel 1',
			setVolts,
			amps: 2,
			expectedStart: new Date(from),
			expectedEnd: new Date(to ?? from + 2 * HOUR),
			actualStart: new Date(from),
			actualEnd: to === null ? null : new Date(to),
			status: to === null ? 'running' : 'done'
		})
		.returning();
	return s;
}

type R = { group: string | null; t: number; volts?: number; amps?: number; tempC?: number };
async function log(f: Fixture, sessionId: string, rows: R[]) {
	await db.insert(readings).values(
		rows.map((r) => ({
			sessionId,
			packId: f.pack.id,
			groupId: r.group,
			takenAt: new Date(r.t),
			volts: r.volts ?? null,
			amps: r.amps ?? null,
			tempC: r.tempC ?? null,
			source: 'hand' as const,
			clientId: randomUUID()
		}))
	);
}

async function seed() {
	const f = await historyPack();
	const [g1, g2, g3] = f.groups.map((g) => g.id);
	const a = await session(f, 'Session A', 'done', A, at(A, '14:00'));
	await step(a.id, 1, g1, 4.2, A, at(A, '12:00'));
	await step(a.id, 2, g2, 4.2, at(A, '12:00'), at(A, '14:00'));
	await log(f, a.id, [
		{ group: g1, t: at(A, '09:59'), volts: 3.4193, tempC: 25 },
		{ group: g1, t: at(A, '10:00', 30), volts: 3.4693, amps: 2.0 },
		{ group: g1, t: at(A, '11:00'), volts: 4.1, amps: 2.0 },
		{ group: g1, t: at(A, '11:30'), volts: 4.195, amps: 1.0, tempC: 31 },
		{ group: g1, t: at(A, '11:55'), volts: 4.198, amps: 0.4 },
		{ group: g1, t: at(A, '12:10'), volts: 4.15, tempC: 27 },
		{ group: g1, t: at(A, '14:00'), volts: 4.1121 },
		{ group: g1, t: at(A, '15:00'), volts: 4.105 },
		{ group: g2, t: at(A, '11:59', 30), volts: 3.4193, tempC: 24 },
		{ group: g2, t: at(A, '12:00', 40), volts: 3.4793, amps: 2.0 },
		{ group: g2, t: at(A, '13:00'), volts: 4.1, amps: 2.0, tempC: 29.5 },
		{ group: g2, t: at(A, '13:40'), volts: 4.19, amps: 0.8 },
		{ group: g2, t: at(A, '16:00'), volts: 4.0664 }
	]);
	const b = await session(f, 'Session B', 'done', B, at(B, '12:00'));
	await step(b.id, 1, null, 12.6, B, at(B, '12:00'));
	await log(f, b.id, [
		{ group: null, t: at(B, '10:30'), volts: 12.0 },
		{ group: null, t: at(B, '11:00'), volts: 12.525 },
		{ group: g1, t: at(B, '11:50'), volts: 4.19 },
		{ group: g2, t: at(B, '11:50'), volts: 4.16 },
		{ group: g3, t: at(B, '11:50'), volts: 4.19 },
		{ group: g1, t: at(B, '14:00'), volts: 4.12 },
		{ group: g2, t: at(B, '14:00'), volts: 4.09 },
		{ group: g3, t: at(B, '14:00'), volts: 4.12 }
	]);
	const c = await session(f, 'Session C', 'running', C, null);
	await step(c.id, 1, g1, 4.2, C, null);
	await log(f, c.id, [{ group: g1, t: at(C, '10:10'), volts: 3.9, amps: 1.0 }]);
	await session(f, 'Session D', 'planned', C + DAY, null);
	return { f, a, b, c };
}

describe('the pack history', () => {
	it('gives each group’s figures per session, names the weakest and the drifting group, and the health the readings allow', async () => {
		const { f } = await seed();
		const h = await loadPackHistory(f.owner, f.pack.id, new Date(at(C, '10:30')));
		expect(h.sessions.map((s) => [s.name, s.status])).toEqual([
			['Session A', 'done'],
			['Session B', 'done'],
			['Session C', 'running']
		]);
		const [a, b, c] = h.sessions;
		const [a1, a2] = a.groups;
		expect(a1.index).toBe(1);
		expect(a1.ah).toBeCloseTo(3.075, 6);
		expect(a1.cvHours).toBeCloseTo(0.5, 6);
		expect(a1.endVolts).toBe(4.198);
		expect(a1.restVoltsBefore).toBe(3.4193);
		expect(a1.restVolts).toBe(4.1121);
		expect(a1.peakTempC).toBe(31);
		expect(a1.capacityAh).toBeCloseTo(3.7541, 3);
		expect(a1.resistanceMilliohms).toBeCloseTo(25, 6);
		expect(a2.ah).toBeCloseTo(3.2, 6);
		expect(a2.cvHours).toBeCloseTo(1 / 3, 6);
		expect(a2.endVolts).toBe(4.19);
		expect(a2.restVolts).toBe(4.0664);
		expect(a2.peakTempC).toBe(29.5);
		expect(a2.capacityAh).toBeCloseTo(4.5487, 3);
		expect(a2.resistanceMilliohms).toBeCloseTo(30, 6);

		for (const g of b.groups) {
			expect(g.ah).toBeNull();
			expect(g.ahMissing).toMatch(/not logged/);
			expect(g.cvHours).toBeCloseTo(1, 6);
			expect(g.peakTempC).toBeNull();
			expect(g.capacityAh).toBeNull();
		}
		expect(b.groups.map((g) => [g.endVolts, g.restVolts])).toEqual([
			[4.19, 4.12],
			[4.16, 4.09],
			[4.19, 4.12]
		]);
		expect(c.groups).toHaveLength(1);
		expect(c.groups[0].ah).toBeCloseTo(0.5, 6);
		expect(c.groups[0].restVolts).toBeNull();

		expect(h.weakest?.index).toBe(2);
		expect(h.weakest?.text).toMatch(/^Group 2 is the weakest: .*rested 30 mV lower than the mean of the others/);
		expect(h.weakest?.text).toMatch(/ended the charge 30 mV below/);
		expect(h.drifting.map((d) => d.index)).toEqual([2]);
		expect(h.drifting[0].text).toMatch(/30 mV below the others, 22 mV more/);

		const health1 = h.health.find((x) => x.index === 1)!;
		expect(health1.capacityAh).toBeCloseTo(3.7541, 3);
		expect(health1.resistanceMilliohms).toBeCloseTo(25, 6);
		expect(health1.capacityFrom).toBe('Session A');
		// One capacity: no fade forecast, and the page says what is missing.
		expect(health1.fade).toBeNull();
		expect(health1.notes).toContain('No fade forecast yet: it needs a capacity counted at three charges or more.');
		// Group 3 was never charged on its own with readings around its start: what to log, in words.
		const health3 = h.health.find((x) => x.index === 3)!;
		expect(health3.capacityAh).toBeNull();
		expect(health3.resistanceMilliohms).toBeNull();
		expect(health3.notes.join(' ')).toMatch(/take a rest reading of each group before and after the next charge/);
	});

	it('lets a viewer read the history of their own pack only', async () => {
		const { f } = await seed();
		const viewer = await joinAs(f.owner, 'viewer');
		await db.update(packs).set({ packOwnerId: viewer.user.id }).where(eq(packs.id, f.pack.id));
		const other = await addPack(f.owner, { name: 'Not theirs', cellSpecId: f.spec.id, series: 3, parallel: 1 });

		const pageAs = (packId: string) => {
			const url = new URL(`http://127.0.0.1/w/${f.owner.workshop.slug}/packs/${packId}/history`);
			const event = { locals: { user: { id: viewer.user.id, email: viewer.user.email, name: viewer.user.name }, session: null }, params: { workshop: f.owner.workshop.slug, packId }, url };
			return loadHistoryPage(event as unknown as Parameters<typeof loadHistoryPage>[0]) as Promise<{ sessions: unknown[]; weakest: { index: number } | null }>;
		};
		const own = await pageAs(f.pack.id);
		expect(own.sessions).toHaveLength(3);
		expect(own.weakest?.index).toBe(2);

		const refused = await pageAs(other.id).then(
			() => null,
			(e: unknown) => e
		);
		expect(isHttpError(refused) && [403, 404].includes(refused.status)).toBe(true);
	});
});
