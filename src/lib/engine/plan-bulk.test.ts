import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { estimateCharge } from './charge';
import { PACK_STEP_ID, planBulk, type BulkInput } from './plan-bulk';
import { restVoltageFromSoc } from './soc';
import { at, firstBadNumber, stepsStartingUnattended } from './test-support';

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
		expect(r.firstFullGroupId).toBe('G14');
		const ref = estimateCharge({ chemistry: 'nmc', capacityAh: 16, startSoc: 0.43, amps: 10, setVolts: 4.2 });
		if (!ref.ok) throw new Error();
		expect(r.bulkHours).toBeCloseTo(ref.ccHours, 9);
		for (const [i, g] of r.groupsAtStop.entries()) {
			expect(g.soc).toBeCloseTo(ref.socAtCv - 0.01 * (13 - i), 9);
			expect(g.restVolts).toBeCloseTo(restVoltageFromSoc('nmc', g.soc) as number, 12);
			expect(g.deficitAh).toBeCloseTo((ref.endSoc - g.soc) * 16, 9);
		}
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
		fc.assert(
			fc.property(
				fc.array(fc.record({ capacityAh: fc.double({ min: 1, max: 300, noNaN: true }), startSoc: fc.double({ min: 0.05, max: 0.95, noNaN: true }) }), { minLength: 1, maxLength: 16 }),
				fc.array(fc.tuple(fc.double({ min: 0, max: 20, noNaN: true }), fc.double({ min: 0.5, max: 8, noNaN: true })), { minLength: 1, maxLength: 3 }),
				fc.boolean(),
				(gs, ws, withBms) => {
					const handsOn = Array.from({ length: 40 }, (_, day) => ws.map(([s, len]) => ({ start: at(day * 24 + s), end: at(day * 24 + s + len) }))).flat();
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
					expect(firstBadNumber(r)).toBeNull();
					expect(stepsStartingUnattended(r.steps, handsOn)).toEqual([]);
				}
			),
			{ numRuns: 30 }
		);
	});
});
