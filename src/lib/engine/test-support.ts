// Shared by the engine's tests only (never imported by the engine): a seeded PRNG, exact optima
// from the yalps MIP solver as an outside reference, a scan for NaN or negative numbers, and the
// published rest curves written out again from references.md §2 (not imported from chemistry.ts),
// so an ODE reference model does not lean on the engine's own curve code.
import { solve, type Model } from 'yalps';

/**
 * Rest voltage ↔ soc tables as published (references.md §2), copied here by hand: (soc, volts).
 * - nmc: Sunil, Pattipati & Balasingam, IEEE TIM 2025, NMC 21700 at C/20;
 * - lfp: the same paper, LFP 18650 at C/32;
 * - liIon: Zephyr RTOS battery.h "Li-ion" (NCA 18650), 0 %, 10 %, … 100 %.
 * No published LTO or LMO/LCO table exists (references.md §2).
 */
export const publishedRestCurves: Record<'nmc' | 'lfp' | 'liIon', readonly (readonly [number, number])[]> = {
	nmc: [[0, 2.5], [0.005, 2.808], [0.0352, 3.1179], [0.0854, 3.3182], [0.1357, 3.4193], [0.2915, 3.5826], [0.4523, 3.6941], [0.8392, 4.0664], [0.9548, 4.1121], [1, 4.2]],
	lfp: [[0, 2.0102], [0.0033, 2.4177], [0.0117, 2.7405], [0.0267, 2.9299], [0.0534, 3.0872], [0.0885, 3.1942], [0.2972, 3.2772], [0.9833, 3.3511], [0.995, 3.418], [1, 3.5981]],
	liIon: [2.502, 3.146, 3.372, 3.449, 3.532, 3.602, 3.68, 3.764, 3.842, 3.936, 4.032].map((v, i) => [i / 10, v] as const)
};

/** Volts at `soc` by straight lines between a published table's points (clamped at its ends). */
export function tableVolts(table: readonly (readonly [number, number])[], soc: number): number {
	if (soc <= table[0][0]) return table[0][1];
	for (let i = 1; i < table.length; i++) {
		const [s1, v1] = table[i];
		if (s1 >= soc) {
			const [s0, v0] = table[i - 1];
			return v0 + ((soc - s0) / (s1 - s0)) * (v1 - v0);
		}
	}
	return table[table.length - 1][1];
}

/** Soc at `volts` by straight lines between a published table's points (tables rise strictly). */
export function tableSoc(table: readonly (readonly [number, number])[], volts: number): number {
	if (volts <= table[0][1]) return table[0][0];
	for (let i = 1; i < table.length; i++) {
		const [s1, v1] = table[i];
		if (v1 >= volts) {
			const [s0, v0] = table[i - 1];
			return s0 + ((volts - v0) / (v1 - v0)) * (s1 - s0);
		}
	}
	return table[table.length - 1][0];
}

/**
 * For properties that skip some generated cases (a refusal, a solver with no answer): counts the
 * cases that ran to the end, so the test can fail when too few did and the property proved little.
 */
export class RunCounter {
	ran = 0;
	skipped = 0;
	/** At least `share` of all cases (ran + skipped) ran their checks. */
	enough(share: number): boolean {
		return this.ran > 0 && this.ran >= share * (this.ran + this.skipped);
	}
}

/** mulberry32: a small seeded PRNG (public domain), so random cases repeat. */
export function prng(seed: number): () => number {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

/** Exact minimum makespan of jobs on identical machines, by yalps (binary assignment MIP); null when yalps gives no optimum. */
export function exactMakespan(durations: number[], machines: number): number | null {
	const constraints: Record<string, { equal?: number; max?: number }> = {};
	const variables: Record<string, Record<string, number>> = { C: { obj: 1 } };
	durations.forEach((_, j) => (constraints[`job${j}`] = { equal: 1 }));
	for (let m = 0; m < machines; m++) {
		constraints[`load${m}`] = { max: 0 };
		variables.C[`load${m}`] = -1;
	}
	// Job j only on machines m ≤ j: label machines by their first job (drops symmetric copies, keeps every optimum).
	durations.forEach((d, j) => {
		for (let m = 0; m < machines && m <= j; m++) variables[`x${j}_${m}`] = { [`job${j}`]: 1, [`load${m}`]: d };
	});
	const model: Model = {
		direction: 'minimize',
		objective: 'obj',
		constraints,
		variables,
		binaries: Object.keys(variables).filter((k) => k !== 'C')
	};
	const solution = solve(model);
	return solution.status === 'optimal' ? solution.result : null;
}

/**
 * Exact minimum spread (max − min group sum) choosing groups × perGroup of the values, by yalps;
 * null when yalps gives no optimum (it has reported 'infeasible' for feasible cases of this model).
 */
export function exactEqualCountSpread(values: number[], groups: number, perGroup: number): number | null {
	const constraints: Record<string, { equal?: number; max?: number; min?: number }> = {};
	const variables: Record<string, Record<string, number>> = { hi: { obj: 1 }, lo: { obj: -1 } };
	const spares = values.length > groups * perGroup;
	values.forEach((_, i) => (constraints[`item${i}`] = spares ? { max: 1 } : { equal: 1 }));
	for (let g = 0; g < groups; g++) {
		constraints[`count${g}`] = { equal: perGroup };
		constraints[`top${g}`] = { max: 0 };
		constraints[`bottom${g}`] = { min: 0 };
		variables.hi[`top${g}`] = -1;
		variables.lo[`bottom${g}`] = -1;
	}
	// Value i only in groups g ≤ i: label groups by their first value (drops symmetric copies, keeps every optimum).
	values.forEach((v, i) => {
		for (let g = 0; g < groups && g <= i; g++) {
			variables[`x${i}_${g}`] = { [`item${i}`]: 1, [`count${g}`]: 1, [`top${g}`]: v, [`bottom${g}`]: v };
		}
	});
	const model: Model = {
		direction: 'minimize',
		objective: 'obj',
		constraints,
		variables,
		binaries: Object.keys(variables).filter((k) => k !== 'hi' && k !== 'lo')
	};
	// A few generated cases send the branch and bound on for minutes (seen: 4 min on a CI run): give up
	// after 3 s and count the case as unanswered, as the callers already do for any non-optimal status.
	const solution = solve(model, { maxIterations: 1_000_000, timeout: 3_000 });
	return solution.status === 'optimal' ? solution.result : null;
}

/** Every number reachable in `value` is finite and ≥ 0 (Dates excepted); returns the first bad path. */
export function firstBadNumber(value: unknown, path = '$'): string | null {
	if (typeof value === 'number') return Number.isFinite(value) && value >= 0 ? null : `${path} = ${value}`;
	if (value instanceof Date) return Number.isFinite(value.getTime()) ? null : `${path} is an invalid date`;
	if (Array.isArray(value)) {
		for (let i = 0; i < value.length; i++) {
			const bad = firstBadNumber(value[i], `${path}[${i}]`);
			if (bad) return bad;
		}
		return null;
	}
	if (value && typeof value === 'object') {
		for (const [k, v] of Object.entries(value)) {
			const bad = firstBadNumber(v, `${path}.${k}`);
			if (bad) return bad;
		}
	}
	return null;
}

/** Hour `h` of a fixed day, as a Date (tests pass time in; the engine never reads the clock). */
export function at(hours: number): Date {
	return new Date(Date.UTC(2025, 0, 6, 0, 0, 0) + hours * 3_600_000);
}

/**
 * Exact minimum spread by plain enumeration of every equal-count partition (spares included):
 * a second exact reference beside yalps, which on these symmetric models sometimes stops at a
 * slightly worse solution and still reports it optimal (seen with yalps 0.6.4; docs/engine.md).
 */
export function enumeratedEqualCountSpread(values: number[], groups: number, perGroup: number): number {
	const n = values.length;
	const spareSlots = n - groups * perGroup;
	const sums = new Array<number>(groups).fill(0);
	const counts = new Array<number>(groups).fill(0);
	let spares = 0;
	let best = Infinity;
	const visit = (i: number): void => {
		if (i === n) {
			best = Math.min(best, Math.max(...sums) - Math.min(...sums));
			return;
		}
		let triedEmpty = false;
		for (let g = 0; g < groups; g++) {
			if (counts[g] === perGroup) continue;
			if (counts[g] === 0) {
				if (triedEmpty) continue; // empty groups are interchangeable
				triedEmpty = true;
			}
			sums[g] += values[i];
			counts[g]++;
			visit(i + 1);
			sums[g] -= values[i];
			counts[g]--;
		}
		if (spares < spareSlots) {
			spares++;
			visit(i + 1);
			spares--;
		}
	};
	visit(0);
	return best;
}

/** Exact minimum makespan by enumerating every assignment of jobs to identical machines. */
export function enumeratedMakespan(durations: number[], machines: number): number {
	const loads = new Array<number>(machines).fill(0);
	let best = Infinity;
	const visit = (j: number): void => {
		if (j === durations.length) {
			best = Math.min(best, Math.max(...loads));
			return;
		}
		let triedEmpty = false;
		for (let m = 0; m < machines; m++) {
			if (loads[m] === 0) {
				if (triedEmpty) continue;
				triedEmpty = true;
			}
			loads[m] += durations[j];
			visit(j + 1);
			loads[m] -= durations[j];
		}
	};
	visit(0);
	return best;
}

/** The start of each step that falls outside every hands-on window (none, when the plan is sound). */
export function stepsStartingUnattended(steps: { start: Date }[], handsOn: { start: Date; end: Date }[]): Date[] {
	return steps
		.map((s) => s.start)
		.filter((t) => !handsOn.some((w) => w.start.getTime() <= t.getTime() && t.getTime() < w.end.getTime()));
}
