import { describe, expect, it } from 'vitest';
import { groupStatistics, type StatCell } from './group-stats';

// Invented cells; every expected figure below is added up by hand.
const cell = (label: string, groupIndex: number | null, capacityAh: number | null, resistanceMilliOhms: number | null, verdict: StatCell['verdict'] = 'ok', reasons: string[] = []): StatCell => ({
	id: label.toLowerCase(),
	label,
	capacityAh,
	resistanceMilliOhms,
	verdict,
	groupIndex,
	reasons
});

describe('groupStatistics', () => {
	const cells = [
		cell('C10', 1, 3.0, 20),
		cell('C2', 1, 3.1, 24),
		cell('C3', 2, null, 18), // counts at the nominal 3.2 Ah
		cell('C4', 2, 2.9, null),
		cell('C5', null, 3.3, 19)
	];

	it('sums each group, spreads resistance within it and capacity across groups', () => {
		const s = groupStatistics(3, cells, 3.2);
		expect(s.groups.map((g) => g.cells.map((c) => c.label))).toEqual([['C2', 'C10'], ['C3', 'C4'], []]);
		expect(s.groups[0].capacityAh).toBeCloseTo(6.1, 12); // 3.0 + 3.1
		expect(s.groups[1].capacityAh).toBeCloseTo(6.1, 12); // 3.2 (nominal) + 2.9
		expect(s.groups[0].resistanceSpread).toBe(4); // 24 − 20
		expect(s.groups[1].resistanceSpread).toBeNull(); // one reading only
		expect(s.placed).toBe(4);
		expect(s.spreadAh).toBeCloseTo(0, 12); // the empty G3 does not count
		expect(s.warnings).toEqual([]);
	});

	it('warns for each group that holds a rejected cell, with the reason and what to do', () => {
		const s = groupStatistics(2, [...cells.slice(0, 3), cell('C4', 2, 2.9, null, 'reject', ['arrived at 2.10 V, below the 2.50 V minimum'])], 3.2);
		expect(s.groups[1].rejected).toEqual(['C4']);
		expect(s.warnings).toEqual(['G2 holds a rejected cell: C4 — arrived at 2.10 V, below the 2.50 V minimum. Take it out of the pack and match again.']);
	});

	it('no spread with fewer than two filled groups', () => {
		expect(groupStatistics(2, [cell('A1', 1, 3, 20)], 3).spreadAh).toBeNull();
	});
});
