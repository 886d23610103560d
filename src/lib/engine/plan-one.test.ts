import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { planOneAtATime, type OneAtATimeInput } from './plan-one';
import { at, firstBadNumber, RunCounter, stepsStartingUnattended } from './test-support';

const H = 3_600_000;
const hoursBetween = (a: Date, b: Date) => (b.getTime() - a.getTime()) / H;

function plan(input: OneAtATimeInput) {
	const r = planOneAtATime(input);
	if (!r.ok) throw new Error(`${r.reason}: ${r.detail}`);
	return r;
}

// Step hours worked by hand (NMC to 4.20 V; constants from outside the code: 25 % of the charge in
// CV at 1C — BU-409/TI; termination 0.05C — BU-808; k = 1.75, fitted by hand in calibration.test.ts).
// Start soc from the IEEE TIM 2025 NMC table (references.md §2):
//   3.3 V: 0.0352 + 0.0502 × (3.3 − 3.1179) / 0.2003 = 0.080839
//   3.5 V: 0.1357 + 0.1558 × (3.5 − 3.4193) / 0.1633 = 0.212694
//   3.6 V: 0.2915 + 0.1608 × (3.6 − 3.5826) / 0.1115 = 0.316593
// A group of Q Ah at I A: CC to 1 − 0.25·I/Q, so the CV charge is always 0.25 × I × 1 h;
// CV hours = 1.75 × 0.25·I × ln(I / 0.05Q) / (I − 0.05Q).
const HAND = {
	// 20 Ah at 5 A from 3.5 V: CC (0.9375 − 0.212694) × 20 / 5 = 2.899225; CV 2.1875 × ln 5 / 4 = 0.880161
	g20at5: 3.779387,
	// 16 Ah at 5 A from 3.5 V: CC (0.921875 − 0.212694) × 16 / 5 = 2.269380; CV 2.1875 × ln 6.25 / 4.2 = 0.954470
	g16at5: 3.22385,
	// 12 Ah at 5 A from 3.5 V: CC (0.895833 − 0.212694) × 12 / 5 = 1.639535; CV 2.1875 × ln 8.3333 / 4.4 = 1.054108
	g12at5: 2.693644,
	// 16 Ah at 2 A from 3.3 V: CC (0.96875 − 0.080839) × 16 / 2 = 7.103291; CV 0.875 × ln 2.5 / 1.2 = 0.668129
	long16at2: 7.77142,
	// 4 Ah at 2 A from 3.5 V: CC (0.875 − 0.212694) × 4 / 2 = 1.324613; CV 0.875 × ln 10 / 1.8 = 1.119312
	short4at2: 2.443925,
	// 16 Ah at 10 A from 3.6 V: CC (0.84375 − 0.316593) × 16 / 10 = 0.843450; CV 4.375 × ln 12.5 / 9.2 = 1.201094
	g16at10: 2.044544
};

const supply = { id: 'bench', maxAmps: 10, maxVolts: 30 };

describe('planOneAtATime', () => {
	it('building practice (common practice, no published source): 14 groups of about 16 Ah from a 10 A supply, from about 3.6 V, spend roughly an hour each in CC — about 14 h of CC — and longer with the CV tail', () => {
		const groups = Array.from({ length: 14 }, (_, i) => ({ id: `G${i + 1}`, capacityAh: 15.5 + (i % 3) * 0.5, startVolts: 3.58 + (i % 4) * 0.01, maxChargeAmps: 16 }));
		const r = plan({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(8), channel: supply });
		expect(r.steps).toHaveLength(14);
		for (const s of r.steps) {
			expect(s.ccHours).toBeGreaterThan(0.6);
			expect(s.ccHours).toBeLessThan(1.4);
		}
		const cc = r.steps.reduce((sum, s) => sum + s.ccHours, 0);
		expect(cc).toBeGreaterThan(10);
		expect(cc).toBeLessThan(18);
		expect(r.totalHours).toBeGreaterThan(cc + 5);
		expect(r.warnings).toEqual([]);
	});

	it('with someone always there: total = sum of the steps + the swaps between them', () => {
		const groups = [20, 16, 12].map((capacityAh, i) => ({ id: `g${i}`, capacityAh, startVolts: 3.5, maxChargeAmps: 5 }));
		const r = plan({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(0), channel: supply, swapMinutes: 10 });
		// 3.779387 + 3.223850 + 2.693644 = 9.696881 h of steps + 2 swaps × 10 min = 10.030214 h
		expect(r.steps.map((s) => hoursBetween(s.start, s.end))).toEqual([
			expect.closeTo(HAND.g20at5, 5),
			expect.closeTo(HAND.g16at5, 5),
			expect.closeTo(HAND.g12at5, 5)
		]);
		expect(r.totalHours).toBeCloseTo(10.030214, 5);
		expect(r.steps.map((s) => s.groupId)).toEqual(['g0', 'g1', 'g2']); // input order kept when nothing is gained
	});

	it('puts the long step across the gap (worked by hand: short, long, short beats every other order)', () => {
		const long = { id: 'long', capacityAh: 16, startVolts: 3.3, maxChargeAmps: 2 };
		const b = { id: 'b', capacityAh: 4, startVolts: 3.5, maxChargeAmps: 2 };
		const c = { id: 'c', capacityAh: 4, startVolts: 3.5, maxChargeAmps: 2 };
		const L = HAND.long16at2; // 7.77142 h
		const s = HAND.short4at2; // 2.443925 h
		// Windows [0, s + 0.5) and [s + L, 3s + L + 1): b fills the first window, the long step ends
		// exactly as the second opens, c follows: end 2s + L and no hold. Long first ends 3s + L;
		// both short steps first end 2s + 2L.
		// 2s + L = 2 × 2.443925 + 7.77142 = 12.65927 h.
		const handsOn = [
			{ start: at(0), end: at(s + 0.5) },
			{ start: at(s + L), end: at(3 * s + L + 1) }
		];
		const r = plan({ chemistry: 'nmc', groups: [long, b, c], setVolts: 4.2, start: at(0), channel: supply, handsOn });
		expect(r.totalHours).toBeCloseTo(12.65927, 4);
		expect(r.steps.map((x) => x.groupId)).toEqual(['b', 'long', 'c']);
		expect(r.steps.every((x) => x.unattendedHoldHours < 1e-6)).toBe(true);
	});

	it('a step that ends with nobody there holds the group until the next window and says so, calmly and specifically', () => {
		const group = { id: 'G3', capacityAh: 16, startVolts: 3.6, maxChargeAmps: 10 };
		const hours = HAND.g16at10; // 2.044544 h
		// Someone is there 20:00–21:00 and from 07:00 the next day.
		const handsOn = [
			{ start: at(20), end: at(21) },
			{ start: at(31), end: at(40) }
		];
		const r = plan({ chemistry: 'nmc', groups: [group], setVolts: 4.2, start: at(20), channel: supply, handsOn });
		const [step] = r.steps;
		expect(hoursBetween(step.start, step.end)).toBeCloseTo(hours, 5);
		// Ends 22:02.7; nobody until 07:00: held 11 − 2.044544 = 8.955456 h, of which none charging;
		// charging with nobody there from 21:00: 2.044544 − 1 = 1.044544 h.
		expect(step.unattendedHoldHours).toBeCloseTo(8.955456, 5);
		expect(step.unattendedChargeHours).toBeCloseTo(1.044544, 5);
		const w = r.warnings.find((x) => x.code === 'unattended-hold');
		expect(w?.groupId).toBe('G3');
		expect(w?.message).toContain('9.0 h'); // how long it sat
		expect(w?.message).toContain('1.0 h'); // how long it charged unattended
		expect(w?.message).toMatch(/lower set voltage/);
		expect(w?.message).toMatch(/4\.10 V/);
		expect(w?.message).toMatch(/timer/);
		expect(w?.message).toMatch(/fire-safe place/);
		expect(w?.message).toMatch(/datasheet/);
	});

	it('never starts a step while nobody is there; refuses when the hands-on hours run out', () => {
		const groups = [{ id: 'a', capacityAh: 10, startSoc: 0.2 }];
		const r = plan({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(3), channel: supply, handsOn: [{ start: at(8), end: at(9) }, { start: at(30), end: at(31) }] });
		expect(r.steps[0].start).toEqual(at(8));
		const late = planOneAtATime({ chemistry: 'nmc', groups, setVolts: 4.2, start: at(10), channel: supply, handsOn: [{ start: at(8), end: at(9) }] });
		expect(late).toMatchObject({ ok: false, reason: 'hands-on-too-short' });
	});

	it('skips a group that is already full, with a note', () => {
		const r = plan({ chemistry: 'nmc', groups: [{ id: 'full', capacityAh: 5, startSoc: 1 }, { id: 'low', capacityAh: 5, startSoc: 0.3 }], setVolts: 4.2, start: at(0), channel: supply });
		expect(r.steps.map((s) => s.groupId)).toEqual(['low']);
		expect(r.warnings).toContainEqual(expect.objectContaining({ code: 'no-charge-needed', groupId: 'full' }));
	});

	it.each([
		['no groups', { groups: [] }, 'no-groups'],
		['duplicate group ids', { groups: [{ id: 'a', capacityAh: 1, startSoc: 0 }, { id: 'a', capacityAh: 1, startSoc: 0 }] }, 'duplicate-group-id'],
		['a group with no start state', { groups: [{ id: 'a', capacityAh: 1 }] }, 'missing-start'],
		['set voltage above the maximum', { setVolts: 4.3 }, 'set-volts-above-maximum'],
		['a channel that cannot reach the set voltage', { channel: { id: 'x', maxAmps: 5, maxVolts: 4.1 } }, 'channel-volts'],
		['an invalid start', { start: new Date(Number.NaN) }, 'invalid-start'],
		['a window ending before it starts', { handsOn: [{ start: at(5), end: at(4) }] }, 'invalid-hands-on'],
		['negative swap minutes', { swapMinutes: -5 }, 'invalid-swap-minutes']
	])('refuses %s', (_, patch, reason) => {
		const input = { chemistry: 'nmc', groups: [{ id: 'a', capacityAh: 5, startSoc: 0.2 }], setVolts: 4.2, start: at(0), channel: supply, ...patch };
		expect(planOneAtATime(input as OneAtATimeInput)).toMatchObject({ ok: false, reason });
	});

	it('properties (fast-check): every step starts inside a hands-on window, one at a time, each group once, no NaN or negative', () => {
		const groupArb = fc.record({ capacityAh: fc.double({ min: 1, max: 300, noNaN: true }), startSoc: fc.double({ min: 0, max: 0.99, noNaN: true }) });
		const windowsArb = fc.array(fc.tuple(fc.double({ min: 0, max: 20, noNaN: true }), fc.double({ min: 0.2, max: 10, noNaN: true })), { minLength: 1, maxLength: 6 });
		const runs = new RunCounter();
		fc.assert(
			fc.property(fc.array(groupArb, { minLength: 1, maxLength: 8 }), windowsArb, fc.integer({ min: 0, max: 30 }), fc.constantFrom('nmc', 'lfp', 'lto'), (gs, ws, swap, chem) => {
				// Windows every day for a month, so every plan can finish.
				const handsOn = Array.from({ length: 30 }, (_, day) => ws.map(([s, len]) => ({ start: at(day * 24 + s), end: at(day * 24 + s + len) }))).flat();
				const groups = gs.map((g, i) => ({ id: `g${i}`, ...g }));
				const setVolts = chem === 'nmc' ? 4.2 : chem === 'lfp' ? 3.65 : 2.85;
				const r = planOneAtATime({ chemistry: chem, groups, setVolts, start: at(0), channel: { id: 'c', maxAmps: 20, maxVolts: 5 }, swapMinutes: swap, handsOn });
				if (!r.ok) {
					expect(r.reason).toBe('hands-on-too-short');
					runs.skipped++;
					return;
				}
				runs.ran++;
				expect(firstBadNumber(r)).toBeNull();
				expect(stepsStartingUnattended(r.steps, handsOn)).toEqual([]);
				for (let i = 1; i < r.steps.length; i++) {
					expect(r.steps[i].start.getTime()).toBeGreaterThanOrEqual(r.steps[i - 1].end.getTime() + swap * 60_000 - 1);
				}
				expect(new Set(r.steps.map((s) => s.groupId)).size).toBe(r.steps.length);
			}),
			{ numRuns: 40 }
		);
		// A refusal proves nothing about the steps: most generated cases must have produced a plan.
		expect(runs.enough(0.75)).toBe(true);
	});
});
