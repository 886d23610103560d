import fc from 'fast-check';
import greedyPartitioning from 'greedy-number-partitioning';
import { describe, expect, it } from 'vitest';
import { scheduleLongestFirst } from './schedule';
import { enumeratedMakespan, exactMakespan } from './test-support';

function schedule(d: number[], m: number) {
	const r = scheduleLongestFirst(d, m);
	if (!r.ok) throw new Error(r.reason);
	return r;
}

const loads = (d: number[], assignment: number[][]) => assignment.map((jobs) => jobs.reduce((s, j) => s + d[j], 0));

describe('scheduleLongestFirst', () => {
	it('Wikipedia "Partition problem" / "List scheduling": 4,5,6,7,8 on two machines → 17 and 13; the optimum 15 (yalps)', () => {
		const d = [4, 5, 6, 7, 8];
		const r = schedule(d, 2);
		expect(loads(d, r.assignment).sort((a, b) => b - a)).toEqual([17, 13]);
		expect(r.makespanHours).toBe(17);
		expect(exactMakespan(d, 2)).toBeCloseTo(15, 9);
		expect(enumeratedMakespan(d, 2)).toBe(15);
		expect(r.lowerBoundHours).toBe(15); // max(8, 30 / 2) — references.md §7
	});

	it('4,5,6,7,8 on three machines, worked by hand: longest first gives 8 | 7+4 | 6+5 = 11; bound max(8, 30 / 3) = 10', () => {
		const d = [4, 5, 6, 7, 8];
		const r = schedule(d, 3);
		// 8, 7, 6 open the three machines; 5 goes to the least loaded (6) → 11; 4 to the 7 → 11.
		expect(loads(d, r.assignment).sort((a, b) => b - a)).toEqual([11, 11, 8]);
		expect(r.makespanHours).toBe(11);
		expect(r.lowerBoundHours).toBe(10); // references.md §7: max(longest job, total / m)
		expect(enumeratedMakespan(d, 3)).toBe(11); // 10 is impossible: no job fits beside the 8 (all ≥ 4), and 22 h left exceeds 2 × 10
	});

	it("Graham's tight instance {3,3,2,2,2} on two machines → 7 against the optimum 6 (Graham 1969; optimum by yalps)", () => {
		const d = [3, 3, 2, 2, 2];
		const r = schedule(d, 2);
		expect(r.makespanHours).toBe(7);
		expect(exactMakespan(d, 2)).toBeCloseTo(6, 9);
		expect(r.makespanHours / 6).toBeCloseTo(4 / 3 - 1 / 6, 12); // exactly at the bound 4/3 − 1/(3m)
	});

	it('gives the same makespan as the greedy-number-partitioning package (independent longest-first implementation)', () => {
		fc.assert(
			fc.property(fc.array(fc.integer({ min: 1, max: 50 }), { minLength: 1, maxLength: 30 }), fc.integer({ min: 1, max: 6 }), (d, m) => {
				const reference = greedyPartitioning([...d], m).map((subset: number[]) => subset.reduce((s, x) => s + x, 0));
				expect(schedule(d, m).makespanHours).toBe(Math.max(...reference));
			}),
			{ numRuns: 80 }
		);
	});

	it("stays within Graham's 4/3 − 1/(3m) of the exact optimum (enumeration, and yalps); the lower bound never exceeds it", () => {
		fc.assert(
			fc.property(fc.array(fc.integer({ min: 1, max: 20 }), { minLength: 2, maxLength: 8 }), fc.integer({ min: 2, max: 3 }), (d, m) => {
				const r = schedule(d, m);
				const opt = enumeratedMakespan(d, m);
				expect(exactMakespan(d, m) ?? Infinity).toBeGreaterThanOrEqual(opt - 1e-9);
				expect(r.makespanHours).toBeLessThanOrEqual((4 / 3 - 1 / (3 * m)) * opt + 1e-9);
				expect(r.lowerBoundHours).toBeLessThanOrEqual(opt + 1e-9);
				expect(r.makespanHours).toBeGreaterThanOrEqual(opt - 1e-9);
			}),
			{ numRuns: 25 }
		);
	});

	it('assigns every job exactly once', () => {
		fc.assert(
			fc.property(fc.array(fc.double({ min: 0, max: 30, noNaN: true }), { maxLength: 40 }), fc.integer({ min: 1, max: 8 }), (d, m) => {
				const r = schedule(d, m);
				expect(r.assignment.flat().sort((a, b) => a - b)).toEqual(d.map((_, i) => i));
				expect(r.assignment).toHaveLength(m);
			}),
			{ numRuns: 60 }
		);
	});

	it.each([
		['no machines', [1, 2], 0],
		['fractional machines', [1, 2], 1.5],
		['a negative job', [1, -2], 2],
		['a NaN job', [1, Number.NaN], 2],
		['not a list', 'abc', 2]
	])('refuses %s', (_, d, m) => {
		expect(scheduleLongestFirst(d as number[], m as number)).toMatchObject({ ok: false });
	});
});
