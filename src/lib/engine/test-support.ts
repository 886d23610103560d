// Shared by the engine's tests only (never imported by the engine): a seeded PRNG, exact optima
// from the yalps MIP solver as an outside reference, and a scan for NaN or negative numbers.
import { solve, type Model } from 'yalps';

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
	const solution = solve(model, { maxIterations: 1_000_000 });
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
