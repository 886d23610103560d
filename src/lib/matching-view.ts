/** Figures of an assignment as the builder edits it by hand (group sums; no battery model here). */
export type MatchCell = { id: string; capacityAh: number; resistanceMilliOhms: number | null };

export type AssignmentFigures = {
	groupAh: number[];
	spreadAh: number;
	spreadPercent: number;
	resistanceSpreads: (number | null)[];
};

export function assignmentFigures(groups: string[][], cells: Map<string, MatchCell>): AssignmentFigures {
	const groupAh = groups.map((g) => g.reduce((sum, id) => sum + (cells.get(id)?.capacityAh ?? 0), 0));
	const max = Math.max(...groupAh);
	const min = Math.min(...groupAh);
	const mean = groupAh.reduce((a, b) => a + b, 0) / (groupAh.length || 1);
	const resistanceSpreads = groups.map((g) => {
		const rs = g.flatMap((id) => {
			const r = cells.get(id)?.resistanceMilliOhms;
			return r === null || r === undefined ? [] : [r];
		});
		return rs.length > 1 ? Math.max(...rs) - Math.min(...rs) : null;
	});
	return {
		groupAh,
		spreadAh: groups.length ? max - min : 0,
		spreadPercent: mean > 0 ? ((max - min) / mean) * 100 : 0,
		resistanceSpreads
	};
}

/** Swaps two cells wherever they are (groups or spares); returns new arrays. */
export function swapCells(groups: string[][], spares: string[], a: string, b: string) {
	const swap = (id: string) => (id === a ? b : id === b ? a : id);
	return { groups: groups.map((g) => g.map(swap)), spares: spares.map(swap) };
}
