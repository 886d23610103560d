import { fail, isFiniteNumber, type Result } from './types';

/** Up to this many values the search is exact (branch and bound), within NODE_BUDGET nodes. */
export const EXACT_MAX_VALUES = 20;
const NODE_BUDGET = 200_000;
const RESISTANCE_PASSES = 4;

export interface PartitionOutcome {
	/** Indices into the values, one array per group, each of perGroup indices. */
	groups: number[][];
	/** Indices left out (values beyond groups × perGroup). */
	spares: number[];
	/** Largest minus smallest group sum. */
	spread: number;
	/** True when the exact search finished: no partition has a smaller spread. */
	optimal: boolean;
}

/**
 * Splits values into `groups` groups of exactly `perGroup` (extra values are left as spares) so that
 * max − min of the group sums is as small as possible; returns indices and the spread.
 */
export function partitionEqualCount(
	values: number[],
	groups: number,
	perGroup: number
): Result<PartitionOutcome> {
	if (!Array.isArray(values) || !values.every((v) => isFiniteNumber(v) && v >= 0)) {
		return fail('invalid-values', 'Values must be numbers of zero or more.');
	}
	if (!Number.isInteger(groups) || groups < 1 || !Number.isInteger(perGroup) || perGroup < 1) {
		return fail('invalid-shape', 'Groups and perGroup must be whole numbers ≥ 1.');
	}
	if (values.length < groups * perGroup) return fail('not-enough-values', `${groups * perGroup} values are needed.`);
	return { ok: true, ...partitionCore(values, groups, perGroup) };
}

/**
 * The matching core (checked input): exact branch and bound for small sets, otherwise balanced
 * longest-first rounds, then pairwise swaps (spares included) until no swap with the fullest or
 * emptiest group helps. `secondary` (e.g. resistance) is made close within groups without widening the spread.
 */
export function partitionCore(
	values: number[],
	S: number,
	P: number,
	secondary?: (number | undefined)[]
): PartitionOutcome {
	const heuristic = balancedSwap(values, S, P);
	let best = heuristic;
	let optimal = false;
	if (values.length <= EXACT_MAX_VALUES) {
		const exact = exactSearch(values, S, P, secondary, heuristic);
		best = exact.solution;
		optimal = exact.finished;
	}
	if (secondary && !optimal) refineSecondary(values, best, secondary);
	const sums = best.groups.map((g) => sumOf(values, g));
	return {
		groups: best.groups,
		spares: best.spares,
		spread: Math.max(...sums) - Math.min(...sums),
		optimal: optimal || Math.max(...sums) - Math.min(...sums) === 0
	};
}

interface Solution {
	groups: number[][];
	spares: number[];
}

function sumOf(values: number[], idx: number[]): number {
	let s = 0;
	for (const i of idx) s += values[i];
	return s;
}

/** Sum of (max − min) of `secondary` within each group, over the values that have one. */
export function secondarySpread(groups: number[][], secondary: (number | undefined)[]): number {
	let total = 0;
	for (const g of groups) total += spreadOf(g, secondary);
	return total;
}

function spreadOf(group: number[], secondary: (number | undefined)[], without = -1, withIdx = -1): number {
	let lo = Infinity;
	let hi = -Infinity;
	for (const i of group) {
		const v = secondary[i === without ? withIdx : i];
		if (v === undefined) continue;
		if (v < lo) lo = v;
		if (v > hi) hi = v;
	}
	return hi >= lo ? hi - lo : 0;
}

// ---------------------------------------------------------------------------------------------
// Heuristic: narrowest window of S·P values, balanced longest-first rounds, then swaps.

function balancedSwap(values: number[], S: number, P: number): Solution {
	const n = values.length;
	const N = S * P;
	const order = values.map((_, i) => i).sort((a, b) => values[b] - values[a] || a - b);
	let start = 0;
	let narrowest = Infinity;
	for (let s = 0; s + N <= n; s++) {
		const range = values[order[s]] - values[order[s + N - 1]];
		if (range < narrowest) {
			narrowest = range;
			start = s;
		}
	}
	const chosen = order.slice(start, start + N);
	const spares = [...order.slice(0, start), ...order.slice(start + N)];
	const groups: number[][] = Array.from({ length: S }, () => []);
	const sums = new Array<number>(S).fill(0);
	const byLightest = groups.map((_, g) => g);
	for (let r = 0; r < P; r++) {
		byLightest.sort((a, b) => sums[a] - sums[b] || a - b);
		for (let j = 0; j < S; j++) {
			const item = chosen[r * S + j];
			const g = byLightest[j];
			groups[g].push(item);
			sums[g] += values[item];
		}
	}
	improveBySwaps(values, groups, sums, spares);
	return { groups, spares };
}

/** Sorted-ascending insert of index `item` by value. */
function insertSorted(values: number[], list: number[], item: number): void {
	let lo = 0;
	let hi = list.length;
	while (lo < hi) {
		const mid = (lo + hi) >> 1;
		if (values[list[mid]] < values[item]) lo = mid + 1;
		else hi = mid;
	}
	list.splice(lo, 0, item);
}

/** First position in sorted `list` whose value is ≥ x. */
function lowerBound(values: number[], list: number[], x: number): number {
	let lo = 0;
	let hi = list.length;
	while (lo < hi) {
		const mid = (lo + hi) >> 1;
		if (values[list[mid]] < x) lo = mid + 1;
		else hi = mid;
	}
	return lo;
}

/**
 * Best a ∈ high, b ∈ low (both sorted ascending) with d = v[a] − v[b] in (eps, dMax − eps), d closest
 * to `target`; returns [posA, posB] or null. The allowed interval contains the target, so the two
 * neighbours of the target in `low` are the only candidates per a.
 */
function bestSwap(values: number[], high: number[], low: number[], target: number, dMax: number, eps: number): [number, number] | null {
	let best: [number, number] | null = null;
	let bestMiss = Infinity;
	for (let pa = 0; pa < high.length; pa++) {
		const va = values[high[pa]];
		const pos = lowerBound(values, low, va - target);
		for (const pb of [pos - 1, pos]) {
			if (pb < 0 || pb >= low.length) continue;
			const d = va - values[low[pb]];
			if (d <= eps || d >= dMax - eps) continue;
			const miss = Math.abs(d - target);
			if (miss < bestMiss) {
				bestMiss = miss;
				best = [pa, pb];
			}
		}
	}
	return best;
}

function improveBySwaps(values: number[], groups: number[][], sums: number[], spares: number[]): void {
	const S = groups.length;
	const sorted = groups.map((g) => [...g].sort((a, b) => values[a] - values[b]));
	const spareList = [...spares].sort((a, b) => values[a] - values[b]);
	let scale = 0;
	for (const s of sums) scale = Math.max(scale, Math.abs(s));
	const eps = Math.max(scale, 1e-300) * 1e-13;
	const ids = groups.map((_, g) => g);
	const swap = (gHigh: number, pa: number, gLow: number | -1, pb: number) => {
		const high = sorted[gHigh];
		const low = gLow === -1 ? spareList : sorted[gLow];
		const a = high[pa];
		const b = low[pb];
		high.splice(pa, 1);
		low.splice(pb, 1);
		insertSorted(values, high, b);
		insertSorted(values, low, a);
		const d = values[a] - values[b];
		sums[gHigh] -= d;
		if (gLow !== -1) sums[gLow] += d;
	};
	const maxIter = 200 * S + 2000;
	for (let iter = 0; iter < maxIter; iter++) {
		let M = 0;
		let m = 0;
		let total = 0;
		for (let g = 0; g < S; g++) {
			if (sums[g] > sums[M]) M = g;
			if (sums[g] < sums[m]) m = g;
			total += sums[g];
		}
		const mean = total / S;
		if (sums[M] - sums[m] <= eps) break;
		ids.sort((a, b) => sums[a] - sums[b]);
		let moved = false;
		// Bring the fullest group down: swap with the emptiest group that allows it.
		for (const h of ids) {
			if (h === M) continue;
			const gap = sums[M] - sums[h];
			if (gap <= eps) break;
			const found = bestSwap(values, sorted[M], sorted[h], gap / 2, gap, eps);
			if (found) {
				swap(M, found[0], h, found[1]);
				moved = true;
				break;
			}
		}
		if (!moved && spareList.length > 0) {
			const dMax = Math.min(2 * (sums[M] - mean), sums[M] - sums[m]);
			const found = bestSwap(values, sorted[M], spareList, sums[M] - mean, dMax, eps);
			if (found) {
				swap(M, found[0], -1, found[1]);
				moved = true;
			}
		}
		if (moved) continue;
		// Bring the emptiest group up: swap with the fullest group that allows it.
		for (let j = ids.length - 1; j >= 0; j--) {
			const h = ids[j];
			if (h === m) continue;
			const gap = sums[h] - sums[m];
			if (gap <= eps) break;
			const found = bestSwap(values, sorted[h], sorted[m], gap / 2, gap, eps);
			if (found) {
				swap(h, found[0], m, found[1]);
				moved = true;
				break;
			}
		}
		if (!moved && spareList.length > 0) {
			const dMax = Math.min(2 * (mean - sums[m]), sums[M] - sums[m]);
			const found = bestSwap(values, spareList, sorted[m], mean - sums[m], dMax, eps);
			if (found) {
				// A spare (higher) replaces a member of the emptiest group.
				const a = spareList[found[0]];
				const b = sorted[m][found[1]];
				spareList.splice(found[0], 1);
				sorted[m].splice(found[1], 1);
				insertSorted(values, sorted[m], a);
				insertSorted(values, spareList, b);
				sums[m] += values[a] - values[b];
				moved = true;
			}
		}
		if (!moved) break;
	}
	for (let g = 0; g < S; g++) groups[g] = sorted[g];
	spares.length = 0;
	spares.push(...spareList);
}

/**
 * Makes `secondary` close within groups by swaps that keep every group sum inside the current
 * [min, max], so the primary spread never widens.
 */
function refineSecondary(values: number[], solution: Solution, secondary: (number | undefined)[]): void {
	const { groups, spares } = solution;
	const sums = groups.map((g) => sumOf(values, g));
	const lo = Math.min(...sums);
	const hi = Math.max(...sums);
	const owner = new Map<number, number>();
	groups.forEach((g, gi) => g.forEach((i) => owner.set(i, gi)));
	spares.forEach((i) => owner.set(i, -1));
	const all = [...owner.keys()].sort((a, b) => values[a] - values[b]);
	const spreads = groups.map((g) => spreadOf(g, secondary));
	for (let pass = 0; pass < RESISTANCE_PASSES; pass++) {
		let improved = false;
		const order = groups.map((_, g) => g).sort((a, b) => spreads[b] - spreads[a]);
		for (const g of order) {
			if (spreads[g] <= 0) continue;
			const group = groups[g];
			let iMin = -1;
			let iMax = -1;
			for (const i of group) {
				const r = secondary[i];
				if (r === undefined) continue;
				if (iMin < 0 || r < (secondary[iMin] as number)) iMin = i;
				if (iMax < 0 || r > (secondary[iMax] as number)) iMax = i;
			}
			for (const a of [iMax, iMin]) {
				if (a < 0 || !groups[g].includes(a)) continue;
				// d = v[a] − v[b] must keep sums[g] − d inside [lo, hi].
				const from = lowerBound(values, all, values[a] - (sums[g] - lo));
				const to = lowerBound(values, all, values[a] - (sums[g] - hi) + 1e-300);
				let bestGain = 1e-12;
				let bestB = -1;
				let bestNewG = 0;
				let bestNewH = 0;
				for (let p = from; p < to && p < all.length; p++) {
					const b = all[p];
					const h = owner.get(b) as number;
					if (h === g) continue;
					const d = values[a] - values[b];
					if (sums[g] - d < lo || sums[g] - d > hi) continue;
					if (h >= 0 && (sums[h] + d < lo || sums[h] + d > hi)) continue;
					const newG = spreadOf(group, secondary, a, b);
					const newH = h >= 0 ? spreadOf(groups[h], secondary, b, a) : 0;
					const gain = spreads[g] + (h >= 0 ? spreads[h] : 0) - newG - newH;
					if (gain > bestGain) {
						bestGain = gain;
						bestB = b;
						bestNewG = newG;
						bestNewH = newH;
					}
				}
				if (bestB < 0) continue;
				const h = owner.get(bestB) as number;
				const d = values[a] - values[bestB];
				group[group.indexOf(a)] = bestB;
				owner.set(bestB, g);
				owner.set(a, h);
				sums[g] -= d;
				spreads[g] = bestNewG;
				if (h >= 0) {
					groups[h][groups[h].indexOf(bestB)] = a;
					sums[h] += d;
					spreads[h] = bestNewH;
				} else {
					spares[spares.indexOf(bestB)] = a;
				}
				improved = true;
			}
		}
		if (!improved) break;
	}
}

// ---------------------------------------------------------------------------------------------
// Exact: depth-first branch and bound over values sorted largest first.

function exactSearch(
	values: number[],
	S: number,
	P: number,
	secondary: (number | undefined)[] | undefined,
	incumbent: Solution
): { solution: Solution; finished: boolean } {
	const n = values.length;
	const spareSlots = n - S * P;
	const order = values.map((_, i) => i).sort((a, b) => values[b] - values[a] || a - b);
	const v = order.map((i) => values[i]);
	// suffixLargest[i][k]: sum of v[i..i+k-1]; smallest k remaining = last k values.
	const prefix = new Array<number>(n + 1).fill(0);
	for (let i = 0; i < n; i++) prefix[i + 1] = prefix[i] + v[i];
	const largestFrom = (i: number, k: number) => prefix[Math.min(n, i + k)] - prefix[i];
	const smallestTail = (k: number) => prefix[n] - prefix[n - k];

	const incumbentSums = incumbent.groups.map((g) => sumOf(values, g));
	let bestSpread = Math.max(...incumbentSums) - Math.min(...incumbentSums);
	let bestSecondary = secondary ? secondarySpread(incumbent.groups, secondary) : 0;
	let bestAssign: number[] | null = null;
	const tol = 1e-12 * Math.max(1, prefix[n]);

	const assign = new Array<number>(n).fill(-1);
	const sums = new Array<number>(S).fill(0);
	const counts = new Array<number>(S).fill(0);
	let sparesUsed = 0;
	let nodes = 0;
	let finished = true;

	const bound = (i: number): number => {
		let maxLow = -Infinity;
		let minHigh = Infinity;
		for (let g = 0; g < S; g++) {
			const k = P - counts[g];
			const low = sums[g] + (k > 0 ? smallestTail(k) : 0);
			const high = sums[g] + (k > 0 ? largestFrom(i, k) : 0);
			if (low > maxLow) maxLow = low;
			if (high < minHigh) minHigh = high;
		}
		return maxLow - minHigh;
	};

	const leaf = () => {
		const spread = Math.max(...sums) - Math.min(...sums);
		let sec = 0;
		if (secondary) {
			const gs: number[][] = Array.from({ length: S }, () => []);
			for (let i = 0; i < n; i++) if (assign[i] >= 0) gs[assign[i]].push(order[i]);
			sec = secondarySpread(gs, secondary);
		}
		const better = secondary
			? spread < bestSpread - tol || (spread <= bestSpread + tol && sec < bestSecondary - 1e-12)
			: spread < bestSpread - tol;
		if (better) {
			bestSpread = Math.min(bestSpread, spread);
			bestSecondary = sec;
			bestAssign = [...assign];
		}
	};

	const dfs = (i: number): void => {
		if (++nodes > NODE_BUDGET) {
			finished = false;
			return;
		}
		if (i === n) {
			leaf();
			return;
		}
		const lb = bound(i);
		if (secondary ? lb > bestSpread + tol : lb >= bestSpread - tol) return;
		let triedEmpty = false;
		for (let g = 0; g < S; g++) {
			if (counts[g] >= P) continue;
			if (counts[g] === 0) {
				if (triedEmpty) continue;
				triedEmpty = true;
			} else if (!secondary) {
				let twin = false;
				for (let h = 0; h < g; h++) if (counts[h] === counts[g] && sums[h] === sums[g]) twin = true;
				if (twin) continue;
			}
			assign[i] = g;
			sums[g] += v[i];
			counts[g]++;
			dfs(i + 1);
			counts[g]--;
			sums[g] -= v[i];
			assign[i] = -1;
			if (!finished) return;
		}
		if (sparesUsed < spareSlots) {
			sparesUsed++;
			dfs(i + 1);
			sparesUsed--;
		}
	};
	dfs(0);

	if (bestAssign === null) return { solution: incumbent, finished };
	const found: number[] = bestAssign;
	const groups: number[][] = Array.from({ length: S }, () => []);
	const spares: number[] = [];
	for (let i = 0; i < n; i++) {
		if (found[i] >= 0) groups[found[i]].push(order[i]);
		else spares.push(order[i]);
	}
	return { solution: { groups, spares }, finished };
}
