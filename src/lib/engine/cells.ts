import { resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
import { partitionCore } from './partition';
import { fail, isFiniteNumber, isPositive, type Failure, type Result } from './types';

export interface ArrivalCell {
	id: string;
	/** Arrival (rest) voltage. */
	volts: number;
	resistanceMilliOhms?: number;
	capacityAh?: number;
}

export interface InspectOptions {
	/** Reject below this; default min(2.0 V, chemistry minimum) — BU-702 "How to Store Batteries". */
	rejectBelowVolts?: number;
	/** Reject above the chemistry's maximum charge voltage plus this; default 0.10 V (4.30 V for Li-ion — BU-409). */
	rejectAboveMaxVolts?: number;
	/** Suspect when more than this below the batch median; default 0.1 V (common practice). */
	lowVoltsBelowMedian?: number;
	/** Suspect when resistance exceeds this × the batch median; default 1.5 (common practice). */
	resistanceFactor?: number;
	/** Suspect when capacity is more than this share under the batch median; default 0.05 (common practice). */
	capacityShortfall?: number;
}

export type CellFlag =
	| 'below-reject-volts'
	| 'above-max-volts'
	| 'low-volts'
	| 'high-resistance'
	| 'low-capacity'
	| 'missing-volts';

export interface CellVerdict {
	id: string;
	verdict: 'ok' | 'suspect' | 'reject';
	flags: CellFlag[];
}

function median(xs: number[]): number | undefined {
	if (xs.length === 0) return undefined;
	const s = [...xs].sort((a, b) => a - b);
	const mid = s.length >> 1;
	return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
}

/**
 * Flags each arrival cell against the batch medians: reject below 2.0 V (BU-702) or above the
 * charge limit + 0.1 V (BU-409), suspect > 100 mV under the median voltage, resistance > 1.5 × median,
 * capacity > 5 % under median. A cell whose voltage is not a number is suspect ('missing-volts').
 */
export function inspectCells(
	chemistry: ChemistryId | Chemistry,
	cells: ArrivalCell[],
	options: InspectOptions = {}
): CellVerdict[] | Failure {
	const chem = resolveChemistry(chemistry);
	if ('ok' in chem) return chem;
	if (!Array.isArray(cells)) return fail('invalid-cells', 'A list of cells is needed.');
	const rejectBelow = options.rejectBelowVolts ?? Math.min(2.0, chem.minVolts);
	const rejectAbove = chem.maxChargeVolts + (options.rejectAboveMaxVolts ?? 0.1);
	const lowBy = options.lowVoltsBelowMedian ?? 0.1;
	const rFactor = options.resistanceFactor ?? 1.5;
	const shortfall = options.capacityShortfall ?? 0.05;
	if (![rejectBelow, rejectAbove, lowBy, rFactor, shortfall].every(isFiniteNumber)) {
		return fail('invalid-options', 'Inspection thresholds must be numbers.');
	}
	const vMedian = median(cells.filter((c) => isPositive(c?.volts) && c.volts >= rejectBelow).map((c) => c.volts));
	const rMedian = median(cells.filter((c) => isPositive(c?.resistanceMilliOhms)).map((c) => c.resistanceMilliOhms as number));
	const qMedian = median(cells.filter((c) => isPositive(c?.capacityAh)).map((c) => c.capacityAh as number));
	return cells.map((cell) => {
		const flags: CellFlag[] = [];
		const volts = cell?.volts;
		if (!isFiniteNumber(volts) || volts < 0) flags.push('missing-volts');
		else if (volts < rejectBelow) flags.push('below-reject-volts');
		else {
			if (volts > rejectAbove) flags.push('above-max-volts');
			if (vMedian !== undefined && volts < vMedian - lowBy) flags.push('low-volts');
		}
		if (rMedian !== undefined && isPositive(cell?.resistanceMilliOhms) && cell.resistanceMilliOhms > rFactor * rMedian) {
			flags.push('high-resistance');
		}
		if (qMedian !== undefined && isFiniteNumber(cell?.capacityAh) && cell.capacityAh < (1 - shortfall) * qMedian) {
			flags.push('low-capacity');
		}
		const reject = flags.includes('below-reject-volts') || flags.includes('above-max-volts');
		return { id: String(cell?.id), verdict: reject ? 'reject' : flags.length ? 'suspect' : 'ok', flags };
	});
}

export interface MatchInputCell {
	id: string;
	capacityAh: number;
	resistanceMilliOhms?: number;
}

export interface MatchedGroup {
	cellIds: string[];
	capacityAh: number;
	/** Max − min resistance among the group's cells that have one. */
	resistanceSpreadMilliOhms?: number;
}

export interface Match {
	groups: MatchedGroup[];
	/** Largest minus smallest group capacity. */
	spreadAh: number;
	/** spreadAh as a share of the mean group capacity, 0..100. */
	spreadPercent: number;
	/** Cells left out, chosen to help the spread. */
	spares: string[];
	/** True when an exact search proved no assignment has a smaller spread (small sets). */
	optimal: boolean;
	/** The bound the spread is measured against: the spread itself when proven optimal, else 0. */
	lowerBoundAh: number;
}

/**
 * Assigns series × parallel cells to `series` groups of `parallel`: group capacities as equal as
 * possible (max − min), then resistance close within each group without widening that spread.
 */
export function matchCells(input: { cells: MatchInputCell[]; series: number; parallel: number }): Result<Match> {
	if (!input || !Array.isArray(input.cells)) return fail('invalid-input', 'A list of cells is needed.');
	const { cells, series, parallel } = input;
	if (!Number.isInteger(series) || series < 1 || !Number.isInteger(parallel) || parallel < 1) {
		return fail('invalid-topology', 'Series and parallel must be whole numbers ≥ 1.');
	}
	for (const c of cells) {
		if (!c || !isPositive(c.capacityAh)) return fail('invalid-capacity', `Cell ${c?.id} needs a positive capacity.`);
		if (c.resistanceMilliOhms !== undefined && !(isFiniteNumber(c.resistanceMilliOhms) && c.resistanceMilliOhms >= 0)) {
			return fail('invalid-resistance', `Cell ${c.id} has a resistance that is not a number.`);
		}
	}
	if (new Set(cells.map((c) => c.id)).size !== cells.length) return fail('duplicate-cell-id', 'Cell ids must be unique.');
	if (cells.length < series * parallel) {
		return fail('not-enough-cells', `${series}S${parallel}P needs ${series * parallel} cells; ${cells.length} given.`);
	}
	const values = cells.map((c) => c.capacityAh);
	const hasResistance = cells.some((c) => c.resistanceMilliOhms !== undefined);
	const secondary = hasResistance ? cells.map((c) => c.resistanceMilliOhms) : undefined;
	const outcome = partitionCore(values, series, parallel, secondary);
	const groups: MatchedGroup[] = outcome.groups.map((idx) => {
		const rs = idx.map((i) => cells[i].resistanceMilliOhms).filter((r): r is number => r !== undefined);
		const group: MatchedGroup = {
			cellIds: idx.map((i) => cells[i].id),
			capacityAh: idx.reduce((s, i) => s + values[i], 0)
		};
		if (rs.length > 0) group.resistanceSpreadMilliOhms = Math.max(...rs) - Math.min(...rs);
		return group;
	});
	groups.sort((a, b) => b.capacityAh - a.capacityAh);
	const caps = groups.map((g) => g.capacityAh);
	const spreadAh = Math.max(...caps) - Math.min(...caps);
	const mean = caps.reduce((s, c) => s + c, 0) / caps.length;
	return {
		ok: true,
		groups,
		spreadAh,
		spreadPercent: (spreadAh / mean) * 100,
		spares: outcome.spares.map((i) => cells[i].id),
		optimal: outcome.optimal,
		lowerBoundAh: outcome.optimal ? spreadAh : 0
	};
}
