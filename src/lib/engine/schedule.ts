import { fail, isNonNegative, type Result } from './types';

export interface LongestFirstSchedule {
	/** Job indices per machine, in the order each machine runs them. */
	assignment: number[][];
	makespanHours: number;
	/** max(longest job, total / machines): no schedule can finish sooner. */
	lowerBoundHours: number;
}

/** Lower bound on any schedule's makespan: max(longest job, total / machines) — references.md §7. */
export function makespanLowerBound(durationsHours: number[], machines: number): number {
	let longest = 0;
	let total = 0;
	for (const d of durationsHours) {
		longest = Math.max(longest, d);
		total += d;
	}
	return Math.max(longest, total / machines);
}

/**
 * Longest-processing-time-first list scheduling (Graham 1969): jobs longest first, each to the
 * machine that frees first (ties: lowest index). Within 4/3 − 1/(3m) of the optimum makespan.
 */
export function scheduleLongestFirst(durationsHours: number[], machines: number): Result<LongestFirstSchedule> {
	if (!Array.isArray(durationsHours) || !durationsHours.every(isNonNegative)) {
		return fail('invalid-durations', 'Durations must be numbers of zero or more hours.');
	}
	if (!Number.isInteger(machines) || machines < 1) return fail('invalid-machines', 'Machines must be a whole number ≥ 1.');
	const order = durationsHours.map((_, i) => i).sort((a, b) => durationsHours[b] - durationsHours[a] || a - b);
	const assignment: number[][] = Array.from({ length: machines }, () => []);
	const loads = new Array<number>(machines).fill(0);
	for (const job of order) {
		let best = 0;
		for (let m = 1; m < machines; m++) if (loads[m] < loads[best]) best = m;
		assignment[best].push(job);
		loads[best] += durationsHours[job];
	}
	return {
		ok: true,
		assignment,
		makespanHours: Math.max(...loads),
		lowerBoundHours: makespanLowerBound(durationsHours, machines)
	};
}
