import { appendFileSync } from 'node:fs';
import { bench, describe } from 'vitest';
import { matchCells } from './cells';
import { prng } from './test-support';

// 4,000 grade-B cells: 3.0 Ah ±5 %, 18–26 mΩ (references.md §6).
const rnd = prng(4000);
const cells = Array.from({ length: 4000 }, (_, i) => ({ id: `c${i}`, capacityAh: 3.0 * (0.95 + 0.1 * rnd()), resistanceMilliOhms: 18 + 8 * rnd() }));
const capacityOnly = cells.map(({ id, capacityAh }) => ({ id, capacityAh }));
const withSpares = Array.from({ length: 4200 }, (_, i) => ({ id: `s${i}`, capacityAh: 3.0 * (0.95 + 0.1 * rnd()) }));

// 40,000 cells into 400S100P, capacities as a cell tester reports them: whole mAh, 2,850–3,150.
// With every cell used, each group's sum is a whole number of mAh and the total is fixed, so when
// the total does not divide by 400 no assignment has a spread below 1 mAh: a lower bound that
// holds for any method, which the engine's own bound (0 unless proven optimal) cannot give here.
const rnd40k = prng(40_000);
const cells40k = Array.from({ length: 40_000 }, (_, i) => ({ id: `k${i}`, capacityAh: Math.round(2850 + 300 * rnd40k()) / 1000 }));
const match40k = () => matchCells({ cells: cells40k, series: 400, parallel: 100 });

if (process.env.CELLSITTER_BENCH_NOTES) {
	const r = match40k();
	if (!r.ok) throw new Error(r.reason);
	const totalMah = cells40k.reduce((s, c) => s + Math.round(c.capacityAh * 1000), 0);
	// Process CPU time per call beside the wall time (see plans.bench.ts).
	const calls = 5;
	const cpu = process.cpuUsage();
	const wall = performance.now();
	for (let i = 0; i < calls; i++) match40k();
	const used = process.cpuUsage(cpu);
	appendFileSync(
		process.env.CELLSITTER_BENCH_NOTES,
		JSON.stringify({
			kind: 'match40k',
			cells: 40_000,
			series: 400,
			parallel: 100,
			spreadMah: Math.round(r.spreadAh * 1e6) / 1e3,
			wholeMahBoundMah: totalMah % 400 === 0 ? 0 : 1,
			engineLowerBoundMah: r.lowerBoundAh * 1000,
			optimal: r.optimal,
			cpuMsPerCall: (used.user + used.system) / 1000 / calls,
			wallMsPerCall: (performance.now() - wall) / calls
		}) + '\n'
	);
}

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

	bench('matchCells: 40,000 cells into 400S100P, capacity only (target ≤ 1 s)', () => {
		const r = match40k();
		if (!r.ok || r.spreadPercent > 0.1) throw new Error('quality');
	}, { iterations: 5, warmupIterations: 1 });
});
