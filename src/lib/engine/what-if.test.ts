import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { equipmentWhatIf, type EquipmentWhatIf, type WhatIfInput } from './what-if';
import { at, enumeratedMakespan, RunCounter, stepsStartingUnattended } from './test-support';

const H = 3_600_000;
const channel = (id: string, maxAmps = 5, maxVolts = 5) => ({ id, maxAmps, maxVolts });

// Step hours worked by hand (the same working as plan-channels.test.ts): nmc from 20 % to 4.20 V at
// min(5 A channel, 0.7C rating — BU-216) = 5 A, no pre-charge (20 % rests near 3.5 V). CV share 25 %
// at 1C (BU-409/TI), cut-off 0.05C (BU-808), k = 1.75 (fitted by hand in calibration.test.ts):
//   30 Ah: CC (0.958333 − 0.2) × 30 / 5 = 4.55 h; CV 1.75 × 1.25 × ln(5 / 1.5) / 3.5 = 0.752483 h → 5.302483 h
//   10 Ah: CC 0.675 × 10 / 5 = 1.35 h; CV 1.75 × 1.25 × ln 10 / 4.5 = 1.119312 h → 2.469312 h
const HOURS_30 = 5.302483;
const HOURS_10 = 2.469312;
const SWAP = 10 / 60;

function applies(what: WhatIfInput): Extract<EquipmentWhatIf, { applies: true }> {
	const r = equipmentWhatIf(what);
	if (!r.ok) throw new Error(`${r.reason}: ${r.detail}`);
	if (!r.applies) throw new Error(`does not apply: ${r.why}`);
	return r;
}

const groupsOf = (...ah: number[]) => ah.map((capacityAh, i) => ({ id: String(i + 1), capacityAh, startSoc: 0.2 }));
const hoursFrom0 = (d: Date) => (d.getTime() - at(0).getTime()) / H;

describe('equipmentWhatIf', () => {
	it('one group at a time → a second supply: a two-supply schedule worked by hand (30, 10, 10, 10 Ah; 10 min swaps)', () => {
		const r = applies({
			kind: 'one-at-a-time',
			input: { chemistry: 'nmc', groups: groupsOf(30, 10, 10, 10), setVolts: 4.2, start: at(0), swapMinutes: 10, channel: channel('bench') }
		});
		// One supply, someone always there, in the given order: 5.302483 + 3 × (1/6 + 2.469312) = 13.210419 h.
		expect(r.baseline.totalHours).toBeCloseTo(HOURS_30 + 3 * (SWAP + HOURS_10), 4);
		expect(r.baseline.totalHours).toBeCloseTo(13.210419, 4);
		expect(r.baseline.lowerBoundHours).toBeCloseTo(12.710419, 4); // one supply: the sum of the steps
		expect(r.alternatives).toHaveLength(1);
		const two = r.alternatives[0];
		expect(two).toMatchObject({ channels: 2, addedChannels: 1, noGain: false });
		// Two supplies, longest first, each to the supply that frees first (swap times written out):
		//   30 Ah → A 0 – 5.302483
		//   10 Ah → B 0 – 2.469312
		//   10 Ah → B (frees at 2.469312 < 5.302483) 2.635979 – 5.105291
		//   10 Ah → B (frees at 5.105291 < 5.302483) 5.271958 – 7.741270   (on A it would end 7.938462)
		// Any other split is no better: {30, 10} | {10, 10} ends at 5.302483 + 1/6 + 2.469312 = 7.938462.
		expect(two.totalHours).toBeCloseTo(7.74127, 4);
		const lanes = new Map<string, number[]>();
		for (const s of two.steps) lanes.set(s.channelId, [...(lanes.get(s.channelId) ?? []), hoursFrom0(s.start), hoursFrom0(s.end)]);
		const sorted = [...lanes.values()].sort((a, b) => a.length - b.length);
		expect(sorted[0]).toEqual([0, expect.closeTo(5.302483, 4)]);
		expect(sorted[1]).toEqual([
			0,
			expect.closeTo(2.469312, 4),
			expect.closeTo(2.635979, 4),
			expect.closeTo(5.105291, 4),
			expect.closeTo(5.271958, 4),
			expect.closeTo(7.74127, 4)
		]);
		expect(two.hoursSaved).toBeCloseTo(13.210419 - 7.74127, 4);
		expect(hoursFrom0(two.end)).toBeCloseTo(7.74127, 4);
		// Bound by hand (references.md §7): max(5.302483, 12.710419 / 2 = 6.355210) = 6.355210 h.
		expect(two.lowerBoundHours).toBeCloseTo(6.35521, 4);
		expect(two.unattendedChargeHours + two.unattendedHoldHours).toBe(0);
	});

	it('keeps the hands-on hours: two 10 Ah groups with someone there 08:00–09:00 each day', () => {
		const handsOn = [0, 1, 2, 3].map((d) => ({ start: at(24 * d + 8), end: at(24 * d + 9) }));
		const r = applies({
			kind: 'one-at-a-time',
			input: { chemistry: 'nmc', groups: groupsOf(10, 10), setVolts: 4.2, start: at(8), swapMinutes: 10, handsOn, channel: channel('bench') }
		});
		// One supply: group 1 08:00 – 10.469312 h, charges 1.469312 h after 09:00, held until 08:00 next
		// day (21.530688 h); group 2 starts 08:10 next day (32.166667) – 34.635979, charges 1.635979 h
		// with nobody there, held until day 3's 08:00 (56 − 34.635979 = 21.364021 h). 26.635979 h in all.
		expect(r.baseline.totalHours).toBeCloseTo(26.635979, 4);
		expect(r.baseline.unattendedChargeHours).toBeCloseTo(1.469312 + 1.635979, 4);
		expect(r.baseline.unattendedHoldHours).toBeCloseTo(21.530688 + 21.364021, 4);
		// Two supplies: both groups start at 08:00 (no swap before a supply's first step), end at 10.469312.
		const two = r.alternatives[0];
		expect(two.totalHours).toBeCloseTo(HOURS_10, 4);
		expect(two.hoursSaved).toBeCloseTo(26.635979 - 2.469312, 4);
		expect(two.steps.map((s) => hoursFrom0(s.start))).toEqual([8, 8]);
		expect(stepsStartingUnattended(two.steps, handsOn)).toEqual([]);
		// Both charge 1.469312 h after 09:00 and sit held until 08:00 next day: the hold grows a little.
		expect(two.unattendedChargeHours).toBeCloseTo(2 * 1.469312, 4);
		expect(two.unattendedHoldHours).toBeCloseTo(2 * 21.530688, 4);
		// Bound: max(2.469312, 4.938624 / 2) = 2.469312 h, which this plan meets.
		expect(two.lowerBoundHours).toBeCloseTo(HOURS_10, 4);
	});

	it('several channels → one and two more: four 10 Ah groups on 2, 3 and 4 channels, worked by hand', () => {
		const r = applies({
			kind: 'channels',
			input: { chemistry: 'nmc', groups: groupsOf(10, 10, 10, 10), setVolts: 4.2, start: at(0), channels: [channel('c1'), channel('c2')] }
		});
		// 2 channels: two groups each, 2 × 2.469312 = 4.938624 h; bound max(2.469312, 9.877248 / 2) = 4.938624.
		expect(r.baseline.totalHours).toBeCloseTo(2 * HOURS_10, 4);
		expect(r.baseline.lowerBoundHours).toBeCloseTo(4.938624, 4);
		const [three, four] = r.alternatives;
		// 3 channels: one channel still takes two groups — no sooner; bound 9.877248 / 3 = 3.292416 h.
		expect(three).toMatchObject({ channels: 3, addedChannels: 1, noGain: true, hoursSaved: 0 });
		expect(three.totalHours).toBeCloseTo(4.938624, 4);
		expect(three.lowerBoundHours).toBeCloseTo(3.292416, 4);
		// 4 channels: one group each, 2.469312 h, saving 2.469312 h; bound max(2.469312, 9.877248 / 4) = 2.469312.
		expect(four).toMatchObject({ channels: 4, addedChannels: 2, noGain: false });
		expect(four.totalHours).toBeCloseTo(HOURS_10, 4);
		expect(four.hoursSaved).toBeCloseTo(HOURS_10, 4);
		expect(four.lowerBoundHours).toBeCloseTo(HOURS_10, 4);
		expect(new Set(four.steps.map((s) => s.channelId)).size).toBe(4);
	});

	it.each(['bulk', 'bleed', 'rest-check'] as const)('says a what-if does not apply to %s', (kind) => {
		const r = equipmentWhatIf({ kind });
		expect(r).toMatchObject({ ok: true, applies: false });
		expect(r.ok && !r.applies && r.why.length > 20).toBe(true);
	});

	it("passes on the planner's refusal", () => {
		const r = equipmentWhatIf({ kind: 'one-at-a-time', input: { chemistry: 'nmc', groups: [], setVolts: 4.2, start: at(0), channel: channel('a') } });
		expect(r).toMatchObject({ ok: false, reason: 'no-groups' });
	});

	it('properties (fast-check): never ends later than the plan (nor than one fewer channel), never before its bound, steps start with someone there; without hands-on limits the bound is at most the exact optimum', () => {
		const runs = new RunCounter();
		fc.assert(
			fc.property(
				fc.array(fc.record({ capacityAh: fc.double({ min: 1, max: 60, noNaN: true }), startSoc: fc.double({ min: 0, max: 0.9, noNaN: true }) }), { minLength: 1, maxLength: 7 }),
				fc.integer({ min: 1, max: 3 }),
				fc.option(fc.array(fc.tuple(fc.double({ min: 0, max: 20, noNaN: true }), fc.double({ min: 0.5, max: 8, noNaN: true })), { minLength: 1, maxLength: 3 }), { nil: undefined }),
				fc.integer({ min: 0, max: 20 }),
				(gs, m, ws, swap) => {
					const handsOn = ws && Array.from({ length: 20 }, (_, day) => ws.map(([s, len]) => ({ start: at(day * 24 + s), end: at(day * 24 + s + len) }))).flat();
					const base = { chemistry: 'nmc' as const, groups: gs.map((g, i) => ({ id: `g${i}`, ...g })), setVolts: 4.2, start: at(0), swapMinutes: swap, ...(handsOn ? { handsOn } : {}) };
					const what: WhatIfInput =
						m === 1
							? { kind: 'one-at-a-time', input: { ...base, channel: channel('c0', 10) } }
							: { kind: 'channels', input: { ...base, channels: Array.from({ length: m }, (_, c) => channel(`c${c}`, 10)) } };
					const r = equipmentWhatIf(what);
					if (!r.ok) {
						expect(r.reason).toBe('hands-on-too-short');
						runs.skipped++;
						return;
					}
					runs.ran++;
					if (!r.applies) throw new Error('a charge plan always has a what-if');
					let previous = r.baseline;
					for (const alt of r.alternatives) {
						expect(alt.end.getTime()).toBeLessThanOrEqual(r.baseline.end.getTime() + 1000);
						expect(alt.end.getTime()).toBeLessThanOrEqual(previous.end.getTime() + 1000);
						// Dates hold whole milliseconds: allow one.
						expect(alt.totalHours).toBeGreaterThanOrEqual(alt.lowerBoundHours - 1e-6);
						expect(alt.hoursSaved).toBeCloseTo(Math.max(0, r.baseline.totalHours - alt.totalHours), 9);
						expect(alt.steps.map((s) => s.groupId).sort()).toEqual(r.baseline.steps.map((s) => s.groupId).sort());
						if (handsOn) expect(stepsStartingUnattended(alt.steps, handsOn)).toEqual([]);
						else if (swap === 0) {
							const durations = alt.steps.map((s) => (s.end.getTime() - s.start.getTime()) / H);
							const opt = enumeratedMakespan(durations, alt.channels);
							expect(alt.lowerBoundHours).toBeLessThanOrEqual(opt + 1e-6);
							expect(alt.totalHours).toBeGreaterThanOrEqual(opt - 1e-6);
						}
						previous = alt;
					}
				}
			),
			{ numRuns: 40 }
		);
		expect(runs.enough(0.75)).toBe(true);
	});
});
