import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { PACK_STEP_ID, planBulk, type BulkInput } from './plan-bulk';
import { at, firstBadNumber, RunCounter, stepsStartingUnattended } from './test-support';

function plan(input: BulkInput) {
	const r = planBulk(input);
	if (!r.ok) throw new Error(`${r.reason}: ${r.detail}`);
	return r;
}

const packCharger = { id: 'pack', maxAmps: 10, maxVolts: 58.8 };
const topUpChannel = { id: 'bench', maxAmps: 5, maxVolts: 5 };

describe('planBulk', () => {
	// 14S NMC, 16 Ah groups at slightly different states.
	const groups = Array.from({ length: 14 }, (_, i) => ({ id: `G${i + 1}`, capacityAh: 16, startSoc: 0.3 + 0.01 * i }));

	it('without a BMS stops when the first group reaches its CC→CV point; every group keeps its lead over the others', () => {
		const r = plan({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(0), packCharger, topUpChannel });
		// By hand: 14 × 4.2 V = 58.8 V fits the charger; current min(10 A, 0.7C × 16 Ah = 11.2 A — BU-216) = 10 A.
		// C = 10 / 16 = 0.625, so each group's CC→CV point is 1 − 0.25 × 0.625 = 0.84375 (BU-409/TI).
		// G14 starts highest (0.43) and gets there first: (0.84375 − 0.43) × 16 Ah / 10 A = 0.662 h.
		// Meanwhile every group gains 10 A × 0.662 h / 16 Ah = 0.41375: Gi ends at 0.71375 + 0.01 × (i − 1).
		expect(r.amps).toBe(10);
		expect(r.firstFullGroupId).toBe('G14');
		expect(r.bulkHours).toBeCloseTo(0.662, 9);
		for (const [i, g] of r.groupsAtStop.entries()) {
			expect(g.soc).toBeCloseTo(0.71375 + 0.01 * i, 9);
			expect(g.deficitAh).toBeCloseTo((1 - 0.71375 - 0.01 * i) * 16, 9); // to full at 4.20 V
		}
		// Rest volts on the IEEE TIM 2025 NMC table (references.md §2):
		// G1 0.71375 between (0.4523, 3.6941) and (0.8392, 4.0664): 3.6941 + 0.3723 × 0.26145 / 0.3869 = 3.945684 V
		// G13 0.83375, same segment: 3.6941 + 0.3723 × 0.38145 / 0.3869 = 4.061156 V
		// G14 0.84375 between (0.8392, 4.0664) and (0.9548, 4.1121): 4.0664 + 0.0457 × 0.00455 / 0.1156 = 4.068199 V
		expect(r.groupsAtStop[0]).toMatchObject({ groupId: 'G1', restVolts: expect.closeTo(3.945684, 6), deficitAh: expect.closeTo(4.58, 9) });
		expect(r.groupsAtStop[12]).toMatchObject({ groupId: 'G13', restVolts: expect.closeTo(4.061156, 6), deficitAh: expect.closeTo(2.66, 9) });
		expect(r.groupsAtStop[13]).toMatchObject({ groupId: 'G14', restVolts: expect.closeTo(4.068199, 6), deficitAh: expect.closeTo(2.5, 9) });
		expect(r.warnings).toContainEqual(expect.objectContaining({ code: 'stop-bulk-charge', groupId: 'G14' }));
	});

	it('tops up every lagging group one at a time on the top-up channel, after the bulk charge', () => {
		const r = plan({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(0), packCharger, topUpChannel });
		const [bulk, ...topUp] = r.steps;
		expect(bulk).toMatchObject({ groupId: PACK_STEP_ID, channelId: 'pack' });
		expect(r.topUp?.steps).toEqual(topUp);
		expect(topUp.map((s) => s.groupId).sort()).toEqual(groups.map((g) => g.id).sort());
		expect(topUp.every((s) => s.channelId === 'bench' && s.start >= bulk.end)).toBe(true);
		expect(r.end).toEqual(topUp.reduce((a, s) => (s.end > a ? s.end : a), bulk.end));
		// By hand: on the 5 A bench channel each group's CC→CV point is 1 − 0.25 × 5 / 16 = 0.921875 and
		// its CV takes 1.75 × 1.25 Ah × ln(5 / 0.8) / 4.2 = 0.954470 h (k = 1.75, cut-off 0.05C — BU-808).
		// Gi (i = 0..13) starts at 0.71375 + 0.01i: CC (0.921875 − 0.71375 − 0.01i) × 16 / 5.
		// (ln 6.25 = 1.832581, so CV = 2.1875 × 1.832581 / 4.2 = 0.9544695 h.)
		// Sum: 14 × 0.9544695 + 3.2 × (14 × 0.208125 − 0.01 × 91) = 13.362573 + 6.412 = 19.774573 h,
		// back to back with someone always there: the plan ends 0.662 + 19.774573 = 20.436573 h in.
		expect(topUp.find((s) => s.groupId === 'G14')).toMatchObject({ ccHours: expect.closeTo(0.25, 9), cvHours: expect.closeTo(0.95447, 5) });
		expect(r.topUp?.totalHours).toBeCloseTo(19.774573, 5);
		expect(r.totalHours).toBeCloseTo(20.436573, 5);
		expect(firstBadNumber(r)).toBeNull();
	});

	it('with a BMS: 15 Ah between fullest and emptiest at 300 mA takes about 50 h (Electronics World, Nov 2025, p. 28)', () => {
		// Two 280 Ah LFP groups (batterydesign.net "Passive balancing": ≈ 280 Ah, 100–300 mA), 15 Ah apart.
		const lfp = [
			{ id: 'A', capacityAh: 280, startSoc: 0.3 + 15 / 280 },
			{ id: 'B', capacityAh: 280, startSoc: 0.3 }
		];
		const r = plan({ chemistry: 'lfp', groups: lfp, setVolts: 3.6, start: at(0), packCharger: { id: 'pack', maxAmps: 50, maxVolts: 7.3 }, bms: { balanceAmps: 0.3 } });
		expect(r.balanceHours).toBeCloseTo(50, 6);
		expect(r.firstFullGroupId).toBe('A');
		expect(r.topUp).toBeUndefined();
	});

	it('the spread of the deficits, not the deficit to full, sets the balance time', () => {
		const even = groups.map((g) => ({ ...g, startSoc: 0.3 }));
		const r = plan({ chemistry: 'nmc', groups: even, setVolts: 4.2, start: at(0), packCharger, bms: { balanceAmps: 0.09 } });
		expect(r.balanceHours).toBeCloseTo(0, 9);
	});

	it('checks the pack voltage against the charger: 14 × 4.2 V = 58.8 V', () => {
		expect(planBulk({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(0), packCharger: { id: 'p', maxAmps: 10, maxVolts: 54.6 } })).toMatchObject({ ok: false, reason: 'channel-volts' });
		expect(planBulk({ chemistry: 'nmc', groups, setVolts: 3.9, start: at(0), packCharger: { id: 'p', maxAmps: 10, maxVolts: 54.6 } })).toMatchObject({ ok: true });
	});

	it('warns when the bulk charge would end with nobody there', () => {
		const r = plan({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(0), packCharger, topUpChannel, handsOn: [{ start: at(0), end: at(0.2) }, { start: at(10), end: at(60) }] });
		expect(r.warnings).toContainEqual(expect.objectContaining({ code: 'unattended-hold', groupId: PACK_STEP_ID }));
	});

	it.each([
		['a BMS with no balance current', { bms: { balanceAmps: 0 } }, 'invalid-bms'],
		['a charger with no id', { packCharger: { maxAmps: 10, maxVolts: 60 } }, 'invalid-channel'],
		['a bad top-up channel', { topUpChannel: { id: 't', maxAmps: -1, maxVolts: 5 } }, 'invalid-channel']
	])('refuses %s', (_, patch, reason) => {
		expect(planBulk({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(0), packCharger, ...patch } as BulkInput)).toMatchObject({ ok: false, reason });
	});

	it('properties (fast-check): every step starts inside a hands-on window; no NaN or negative number', () => {
		const runs = new RunCounter();
		fc.assert(
			fc.property(
				fc.array(fc.record({ capacityAh: fc.double({ min: 1, max: 300, noNaN: true }), startSoc: fc.double({ min: 0.05, max: 0.95, noNaN: true }) }), { minLength: 1, maxLength: 16 }),
				fc.array(fc.tuple(fc.double({ min: 0, max: 20, noNaN: true }), fc.double({ min: 0.5, max: 8, noNaN: true })), { minLength: 1, maxLength: 3 }),
				fc.boolean(),
				(gs, ws, withBms) => {
					runs.skipped++; // counted as run below once a plan came back
					// 130 days of windows: a BMS at 0.1 A may need (0.95 − 0.05) × 300 Ah / 0.1 A = 2,700 h (113 days).
					const handsOn = Array.from({ length: 130 }, (_, day) => ws.map(([s, len]) => ({ start: at(day * 24 + s), end: at(day * 24 + s + len) }))).flat();
					const groups = gs.map((g, i) => ({ id: `g${i}`, ...g }));
					const r = planBulk({
						chemistry: 'lfp', groups, setVolts: 3.6, start: at(0), handsOn, swapMinutes: 5,
						packCharger: { id: 'pack', maxAmps: 20, maxVolts: 3.65 * 16 },
						...(withBms ? { bms: { balanceAmps: 0.1 } } : { topUpChannel: { id: 'bench', maxAmps: 10, maxVolts: 5 } })
					});
					if (!r.ok) {
						expect(r.reason).toBe('hands-on-too-short');
						return;
					}
					runs.skipped--;
					runs.ran++;
					expect(firstBadNumber(r)).toBeNull();
					expect(stepsStartingUnattended(r.steps, handsOn)).toEqual([]);
				}
			),
			{ numRuns: 30 }
		);
		// A refusal proves nothing about the steps: most generated cases must have produced a plan.
		expect(runs.enough(0.75)).toBe(true);
	});
});
