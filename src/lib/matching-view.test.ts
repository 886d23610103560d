import { describe, expect, it } from 'vitest';
import { assignmentFigures, swapCells } from './matching-view';

// A table written out by hand: three groups of two cells.
const cells = new Map(
	[
		['a', 4.0, 20],
		['b', 3.9, 22],
		['c', 4.1, 19],
		['d', 3.8, null],
		['e', 4.2, 25],
		['f', 3.7, 18]
	].map(([id, capacityAh, r]) => [id as string, { id: id as string, capacityAh: capacityAh as number, resistanceMilliOhms: r as number | null }])
);

describe('assignment figures', () => {
	it('sums groups and measures the spread against the mean', () => {
		const f = assignmentFigures([['a', 'b'], ['c', 'd'], ['e', 'f']], cells);
		expect(f.groupAh.map((x) => +x.toFixed(3))).toEqual([7.9, 7.9, 7.9]);
		expect(f.spreadAh).toBeCloseTo(0, 9);
		expect(f.resistanceSpreads).toEqual([2, null, 7]);
	});

	it('changes after a swap by hand', () => {
		const swapped = swapCells([['a', 'b'], ['c', 'd'], ['e', 'f']], [], 'b', 'e');
		expect(swapped.groups).toEqual([['a', 'e'], ['c', 'd'], ['b', 'f']]);
		const f = assignmentFigures(swapped.groups, cells);
		// 8.2, 7.9, 7.6 Ah: spread 0.6 Ah over a mean of 7.9 Ah.
		expect(f.spreadAh).toBeCloseTo(0.6, 9);
		expect(f.spreadPercent).toBeCloseTo((0.6 / 7.9) * 100, 9);
	});

	it('swaps a spare into a group', () => {
		expect(swapCells([['a', 'b']], ['c'], 'c', 'a')).toEqual({ groups: [['c', 'b']], spares: ['a'] });
	});
});
