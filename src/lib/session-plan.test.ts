import { describe, expect, it } from 'vitest';
import { chemistries } from '$lib/engine';
import { computeSessionPlan, unattendedSpans, windowsFor, type PlanCharger, type PlannedStep, type PlanPack, type SessionPlanInput } from './session-plan';

// Invented equipment and packs for the checks below; every expected figure is worked by hand in
// the comment beside it.
const groups = (n: number) => Array.from({ length: n }, (_, i) => ({ id: `g${i + 1}`, index: i + 1 }));

const lfp4s: PlanPack = {
	series: 4,
	parallel: 1,
	chemistry: chemistries.lfp,
	cellCapacityAh: 105,
	cellMaxChargeAmps: 52.5,
	cellResistanceMilliOhms: null,
	bmsFitted: false,
	bmsBalanceAmps: null,
	groups: groups(4)
};

const nmc13s: PlanPack = {
	series: 13,
	parallel: 4,
	chemistry: chemistries.nmc,
	cellCapacityAh: 4,
	cellMaxChargeAmps: 4,
	cellResistanceMilliOhms: 30,
	bmsFitted: false,
	bmsBalanceAmps: null,
	groups: groups(13)
};

const bench: PlanCharger = {
	id: 'bench',
	name: 'Bench supply',
	kind: 'bench-supply',
	channels: [{ id: 'b1', name: '', position: 1, maxVolts: 30, maxAmps: 5, maxWatts: 150, balanceAmps: null, maxSeriesCells: null }]
};
const hobby: PlanCharger = {
	id: 'hobby',
	name: 'Four-channel charger',
	kind: 'multi-channel',
	channels: [1, 2, 3, 4].map((p) => ({ id: `h${p}`, name: `Channel ${p}`, position: p, maxVolts: 26, maxAmps: 8, maxWatts: 100, balanceAmps: 0.3, maxSeriesCells: 6 }))
};
const packCharger: PlanCharger = {
	id: 'pc',
	name: 'Pack charger',
	kind: 'pack-charger',
	channels: [{ id: 'pc1', name: '', position: 1, maxVolts: 60, maxAmps: 8, maxWatts: 100, balanceAmps: null, maxSeriesCells: null }]
};

function input(over: Partial<SessionPlanInput>, pack: PlanPack, volts: number): SessionPlanInput {
	return {
		kind: 'one-at-a-time',
		target: 'full',
		chargerId: 'bench',
		channelIds: [],
		swapMinutes: 5,
		plannedStart: new Date('2026-07-01T06:00:00Z'),
		handsOn: { daily: [], once: [] },
		startVolts: Object.fromEntries(pack.groups.map((g) => [g.id, volts])),
		...over
	};
}

describe('unattendedSpans', () => {
	it('splits a step into the hours it charges and is held with nobody there (Berlin, summer time = UTC+2)', () => {
		// Someone is there 07:00–23:00 Berlin time, i.e. 05:00–21:00 UTC in July.
		const win = windowsFor({ daily: [{ from: '07:00', to: '23:00' }], once: [] }, 'Europe/Berlin', new Date('2026-07-01T00:00:00Z'));
		expect(win.ok).toBe(true);
		if (!win.ok) return;
		// A step from 20:00 to 02:00 Berlin (18:00Z → 00:00Z) that is then held 5 h until 07:00 Berlin.
		const step: PlannedStep = {
			position: 1,
			groupId: 'g3',
			groupIndex: 3,
			channelId: 'b1',
			channelLabel: 'Bench supply',
			role: 'charge',
			setVolts: 4.2,
			amps: 5,
			expectedStart: new Date('2026-07-01T18:00:00Z'),
			expectedEnd: new Date('2026-07-02T00:00:00Z'),
			preHours: 0,
			ccHours: 5,
			cvHours: 1,
			ah: 20,
			unattendedChargeHours: 3,
			unattendedHoldHours: 5
		};
		const spans = unattendedSpans(step, win.windows);
		// Charging 23:00–02:00 Berlin = 21:00Z–00:00Z (3 h); held 02:00–07:00 Berlin = 00:00Z–05:00Z (5 h).
		expect(spans.map((s) => [s.what, s.start.toISOString(), s.end.toISOString(), s.hours])).toEqual([
			['charging', '2026-07-01T21:00:00.000Z', '2026-07-02T00:00:00.000Z', 3],
			['held at set voltage', '2026-07-02T00:00:00.000Z', '2026-07-02T05:00:00.000Z', 5]
		]);
		expect(spans.every((s) => s.groupIndex === 3)).toBe(true);
	});

	it('has nothing to say when nobody gave hands-on hours', () => {
		const step = { expectedStart: new Date(0), expectedEnd: new Date(3_600_000), unattendedChargeHours: 1, unattendedHoldHours: 0 } as PlannedStep;
		expect(unattendedSpans(step, null)).toEqual([]);
	});
});

describe('windowsFor', () => {
	it('keeps a one-off night watch beside the daily hours', () => {
		const win = windowsFor(
			{ daily: [{ from: '08:00', to: '22:00' }], once: [{ start: '2026-07-01T20:00:00Z', end: '2026-07-02T06:00:00Z' }] },
			'UTC',
			new Date('2026-07-01T08:00:00Z')
		);
		expect(win.ok && win.windows?.some((w) => w.start.toISOString() === '2026-07-01T20:00:00.000Z' && w.end.toISOString() === '2026-07-02T06:00:00.000Z')).toBe(true);
	});

	it('refuses a one-off window that ends before it starts', () => {
		const win = windowsFor({ daily: [], once: [{ start: '2026-07-02T06:00:00Z', end: '2026-07-01T20:00:00Z' }] }, 'UTC', new Date());
		expect(win.ok).toBe(false);
	});

	it('means "someone there throughout" when no hours are given', () => {
		const win = windowsFor({ daily: [], once: [] }, 'UTC', new Date());
		expect(win).toEqual({ ok: true, windows: null });
	});
});

describe('computeSessionPlan', () => {
	it('one group at a time: every group once, the supply set per cell, its current from the channel', () => {
		const plan = computeSessionPlan(lfp4s, [bench], input({}, lfp4s, 3.25), 'UTC');
		expect(plan.ok).toBe(true);
		if (!plan.ok) return;
		expect(plan.steps.map((s) => s.groupIndex).sort()).toEqual([1, 2, 3, 4]);
		for (const s of plan.steps) {
			// LFP full = 3.65 V per cell (its maximum); 1P so the group is one cell.
			expect(s.setVolts).toBe(3.65);
			// min(5 A channel, 150 W / 3.65 V = 41.1 A, 52.5 A rating) = 5 A.
			expect(s.amps).toBe(5);
			expect(s.channelLabel).toBe('Bench supply');
		}
		// Steps follow one another on the one channel, 5 minutes apart for the swap.
		const sorted = [...plan.steps].sort((a, b) => a.position - b.position);
		for (let i = 1; i < sorted.length; i++) {
			expect(sorted[i].expectedStart.getTime() - sorted[i - 1].expectedEnd.getTime()).toBe(5 * 60_000);
		}
		expect(plan.totalHours).toBeCloseTo((plan.end.getTime() - plan.start.getTime()) / 3_600_000, 9);
		expect(plan.warnings.map((w) => w.code)).toContain('no-hands-on-hours');
	});

	it('the engine sees group numbers, so its warnings name the group as people count them', () => {
		const plan = computeSessionPlan(
			lfp4s,
			[bench],
			input({ handsOn: { daily: [{ from: '07:00', to: '09:00' }], once: [] } }, lfp4s, 3.2),
			'UTC'
		);
		expect(plan.ok).toBe(true);
		if (!plan.ok) return;
		const unattended = plan.warnings.filter((w) => w.code.startsWith('unattended'));
		expect(unattended.length).toBeGreaterThan(0);
		expect(unattended.every((w) => /^Group [1-4] /.test(w.message))).toBe(true);
		expect(plan.unattended.length).toBeGreaterThan(0);
	});

	it('whole pack then top-up: the pack step at S × set volts, current limited by the charger watts', () => {
		const plan = computeSessionPlan(
			nmc13s,
			[packCharger, hobby],
			input({ kind: 'bulk-top-up', chargerId: 'pc', topUpChannelId: 'h2' }, nmc13s, 3.6),
			'UTC'
		);
		expect(plan.ok).toBe(true);
		if (!plan.ok) return;
		const first = plan.steps[0];
		expect(first.groupId).toBeNull();
		// 13 × 4.20 V = 54.6 V; 100 W / 54.6 V = 1.8315 A (below 8 A and the 16 A group rating).
		expect(first.setVolts).toBe(54.6);
		expect(first.amps).toBeCloseTo(100 / 54.6, 6);
		expect(plan.bulk?.packAmps).toBeCloseTo(100 / 54.6, 6);
		for (const s of plan.steps.slice(1)) {
			expect(s.role).toBe('top-up');
			expect(s.channelLabel).toBe('Four-channel charger, Channel 2');
			// One group on a channel: 4.20 V; min(8 A, 100 W / 4.2 V = 23.8 A, 4P × 4 A = 16 A) = 8 A.
			expect(s.setVolts).toBe(4.2);
			expect(s.amps).toBe(8);
		}
	});

	it('with a BMS needs its balance current', () => {
		const plan = computeSessionPlan(nmc13s, [packCharger], input({ kind: 'bulk-bms', chargerId: 'pc' }, nmc13s, 3.6), 'UTC');
		expect(plan).toMatchObject({ ok: false, reason: 'no-bms-balance' });
	});

	it('several channels: a lower bound beside the plan, and no later end than one channel', () => {
		const volts = Object.fromEntries(nmc13s.groups.map((g) => [g.id, 3.4 + g.index * 0.01]));
		const one = computeSessionPlan(nmc13s, [hobby], input({ kind: 'one-at-a-time', chargerId: 'hobby', startVolts: volts }, nmc13s, 0), 'UTC');
		const four = computeSessionPlan(nmc13s, [hobby], input({ kind: 'channels', chargerId: 'hobby', startVolts: volts }, nmc13s, 0), 'UTC');
		expect(one.ok && four.ok).toBe(true);
		if (!one.ok || !four.ok) return;
		expect(four.lowerBoundHours).not.toBeNull();
		expect(four.totalHours).toBeGreaterThanOrEqual((four.lowerBoundHours as number) - 1e-9);
		expect(four.totalHours).toBeLessThan(one.totalHours);
		expect(new Set(four.steps.map((s) => s.channelId)).size).toBe(4);
	});

	it('a rest check is one rest step of the hours asked, with no charger', () => {
		const plan = computeSessionPlan(lfp4s, [], input({ kind: 'rest-check', restHours: 72, chargerId: null }, lfp4s, 3.3), 'UTC');
		expect(plan.ok).toBe(true);
		if (!plan.ok) return;
		expect(plan.steps).toHaveLength(1);
		expect(plan.steps[0]).toMatchObject({ role: 'rest', groupId: null, amps: null, setVolts: null });
		expect(plan.totalHours).toBe(72);
		expect(plan.warnings).toEqual([]);
	});

	it('says which group lacks a start state, and what else is missing, in words', () => {
		const missing = input({}, lfp4s, 3.3);
		delete missing.startVolts.g3;
		expect(computeSessionPlan(lfp4s, [bench], missing, 'UTC')).toMatchObject({ ok: false, message: 'Group 3 needs its rest voltage to plan from.' });
		expect(computeSessionPlan(lfp4s, [bench], input({ chargerId: 'nope' }, lfp4s, 3.3), 'UTC')).toMatchObject({ ok: false, reason: 'no-charger' });
		expect(computeSessionPlan(lfp4s, [], input({ kind: 'rest-check' }, lfp4s, 3.3), 'UTC')).toMatchObject({ ok: false, reason: 'invalid-rest-hours' });
		expect(computeSessionPlan(lfp4s, [], input({ kind: 'bleed' }, lfp4s, 3.3), 'UTC')).toMatchObject({ ok: false, reason: 'invalid-load' });
	});

	it('a bleed names its load and needs no charger', () => {
		const volts = { g1: 3.3, g2: 3.32, g3: 3.28, g4: 3.35 };
		const plan = computeSessionPlan(lfp4s, [], input({ kind: 'bleed', chargerId: null, bleedLoad: { ohms: 2 }, startVolts: volts }, lfp4s, 0), 'UTC');
		expect(plan.ok).toBe(true);
		if (!plan.ok) return;
		expect(plan.setVoltsPerCell).toBeNull();
		// Target "lowest": group 3 at 3.28 V has nothing to bleed; the three others do.
		expect(plan.steps.map((s) => s.groupIndex).sort()).toEqual([1, 2, 4]);
		expect(plan.steps.every((s) => s.role === 'bleed' && s.channelLabel === '2 Ω resistor')).toBe(true);
		// A 2 Ω resistor across a 3.35 V group draws 3.35 / 2 = 1.675 A at the start.
		expect(plan.steps.find((s) => s.groupIndex === 4)?.amps).toBeCloseTo(1.675, 3);
	});
});
