/**
 * Figures of a pack's saved groups for the pack page: the cells of each group, its capacity and
 * resistance spread, the capacity spread across groups, and a warning for every group that holds a
 * rejected cell (a measurement edited after the matching was saved).
 */
import type { CellVerdict } from '$lib/engine';
import { sortByLabel } from '$lib/natural-sort';

export type StatCell = {
	id: string;
	label: string;
	/** Measured capacity (Ah); null counts at the spec's nominal capacity. */
	capacityAh: number | null;
	resistanceMilliOhms: number | null;
	verdict: CellVerdict['verdict'];
	/** 1-based group index, null when not in a group. */
	groupIndex: number | null;
	reasons: string[];
};

export type GroupStat = {
	index: number;
	cells: { id: string; label: string; verdict: CellVerdict['verdict'] }[];
	/** Sum of the cells' capacities (Ah). */
	capacityAh: number;
	/** Largest minus smallest resistance (mΩ) among cells that have one; null below two readings. */
	resistanceSpread: number | null;
	/** Labels of the rejected cells in this group. */
	rejected: string[];
};

export type GroupStatistics = {
	groups: GroupStat[];
	placed: number;
	/** Largest minus smallest capacity (Ah) of the groups that hold cells; null below two such groups. */
	spreadAh: number | null;
	/** One plain sentence per group that holds a rejected cell, saying what to do. */
	warnings: string[];
};

/** Statistics of groups 1..series; `nominalAh` is the spec's capacity for cells without a measured one. */
export function groupStatistics(series: number, cells: readonly StatCell[], nominalAh: number): GroupStatistics {
	const groups = Array.from({ length: series }, (_, i): GroupStat => {
		const members = sortByLabel(cells.filter((c) => c.groupIndex === i + 1));
		const resistances = members.flatMap((c) => (c.resistanceMilliOhms === null ? [] : [c.resistanceMilliOhms]));
		return {
			index: i + 1,
			cells: members.map((c) => ({ id: c.id, label: c.label, verdict: c.verdict })),
			capacityAh: members.reduce((sum, c) => sum + (c.capacityAh ?? nominalAh), 0),
			resistanceSpread: resistances.length > 1 ? Math.max(...resistances) - Math.min(...resistances) : null,
			rejected: members.filter((c) => c.verdict === 'reject').map((c) => c.label)
		};
	});
	const filled = groups.filter((g) => g.cells.length).map((g) => g.capacityAh);
	const warnings = groups.flatMap((g) => {
		const bad = sortByLabel(cells.filter((c) => c.groupIndex === g.index && c.verdict === 'reject'));
		if (!bad.length) return [];
		const which = bad.map((c) => `${c.label} — ${c.reasons.join('; ')}`).join('; ');
		const holds = bad.length === 1 ? 'a rejected cell' : `${bad.length} rejected cells`;
		return [`G${g.index} holds ${holds}: ${which}. Take ${bad.length === 1 ? 'it' : 'them'} out of the pack and match again.`];
	});
	return {
		groups,
		placed: groups.reduce((n, g) => n + g.cells.length, 0),
		spreadAh: filled.length > 1 ? Math.max(...filled) - Math.min(...filled) : null,
		warnings
	};
}
