import { bench, describe } from 'vitest';
import { matchCells } from './cells';
import { prng } from './test-support';

// 4,000 grade-B cells: 3.0 Ah ±5 %, 18–26 mΩ (references.md §6).
const rnd = prng(4000);
const cells = Array.from({ length: 4000 }, (_, i) => ({ id: `c${i}`, capacityAh: 3.0 * (0.95 + 0.1 * rnd()), resistanceMilliOhms: 18 + 8 * rnd() }));
const capacityOnly = cells.map(({ id, capacityAh }) => ({ id, capacityAh }));
const withSpares = Array.from({ length: 4200 }, (_, i) => ({ id: `s${i}`, capacityAh: 3.0 * (0.95 + 0.1 * rnd()) }));

describe('matching', () => {
	bench('matchCells: 4,000 cells into 200S20P, capacity only (target ≤ 300 ms)', () => {
		const r = matchCells({ cells: capacityOnly, series: 200, parallel: 20 });
		if (!r.ok || r.spreadPercent > 0.1) throw new Error('quality');
	}, { iterations: 30, warmupIterations: 3 });

	bench('matchCells: 4,000 cells into 200S20P, with resistance', () => {
		const r = matchCells({ cells, series: 200, parallel: 20 });
		if (!r.ok || r.spreadPercent > 0.1) throw new Error('quality');
	}, { iterations: 30, warmupIterations: 3 });

	bench('matchCells: 4,200 cells into 200S20P (200 spares)', () => {
		const r = matchCells({ cells: withSpares, series: 200, parallel: 20 });
		if (!r.ok || r.spreadPercent > 0.1) throw new Error('quality');
	}, { iterations: 30, warmupIterations: 3 });
});
