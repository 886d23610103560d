import { familyOf, resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
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
	/**
	 * Reject below this. It can only raise the floor, never lower it: the floor is the chemistry's
	 * absolute minimum (BU-216: NMC, NCA, LCO, LMO 2.5 V, LFP 2.0 V, LTO 1.5 V), and for the 4.2 V
	 * family never under 2.0 V whatever a custom profile says (BU-702 "How to Store Batteries").
	 */
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
	| 'over-discharged'
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

/** The thresholds one batch was judged by (volts, mΩ, Ah); the medians are absent when nothing was measured. */
export interface InspectionLimits {
	/** Below this a cell is over-discharged: rejected. */
	rejectBelowVolts: number;
	/** Above this a cell is over-charged: rejected. */
	rejectAboveVolts: number;
	maxChargeVolts: number;
	medianVolts?: number;
	/** Suspect below this (median − lowVoltsBelowMedian). */
	lowVoltsBelow?: number;
	medianResistanceMilliOhms?: number;
	/** Suspect above this (factor × median). */
	highResistanceAbove?: number;
	resistanceFactor: number;
	medianCapacityAh?: number;
	/** Suspect below this ((1 − shortfall) × median). */
	lowCapacityBelow?: number;
}

export interface Inspection {
	limits: InspectionLimits;
	verdicts: CellVerdict[];
}

/** The 4.2 V family's floor: a Li-ion cell kept below 2.0 V is to be discarded — BU-702. */
const LI_ION_FLOOR_VOLTS = 2.0;

function median(xs: number[]): number | undefined {
	if (xs.length === 0) return undefined;
	const s = [...xs].sort((a, b) => a - b);
	const mid = s.length >> 1;
	return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
}

/** The absolute minimum a cell of this chemistry may ever sit at (see InspectOptions.rejectBelowVolts). */
export function absoluteMinimumVolts(chemistry: Chemistry): number {
	return familyOf(chemistry) === 'li-ion' ? Math.max(chemistry.minVolts, LI_ION_FLOOR_VOLTS) : chemistry.minVolts;
}

/**
 * Judges each arrival cell. Rejected: below the chemistry's absolute minimum (over-discharged —
 * BU-216, BU-702) or above the charge limit + 0.1 V (BU-409). Suspect: > 100 mV under the median
 * voltage, resistance > 1.5 × median, capacity > 5 % under median, or no voltage ('missing-volts').
 * Returns the verdicts with the thresholds used, so that messages can quote them.
 */
export function inspectBatch(
	chemistry: ChemistryId | Chemistry,
	cells: ArrivalCell[],
	options: InspectOptions = {}
): Inspection | Failure {
	const chem = resolveChemistry(chemistry);
	if ('ok' in chem) return chem;
	if (!Array.isArray(cells)) return fail('invalid-cells', 'A list of cells is needed.');
	const floor = absoluteMinimumVolts(chem);
	const rejectBelow = Math.max(floor, options.rejectBelowVolts ?? floor);
	const rejectAbove = chem.maxChargeVolts + (options.rejectAboveMaxVolts ?? 0.1);
	const lowBy = options.lowVoltsBelowMedian ?? 0.1;
	const rFactor = options.resistanceFactor ?? 1.5;
	const shortfall = options.capacityShortfall ?? 0.05;
	if (![rejectBelow, rejectAbove, lowBy, rFactor, shortfall].every(isFiniteNumber)) {
		return fail('invalid-options', 'Inspection thresholds must be numbers.');
	}
	// Rejected cells do not move the batch's medians: a dead cell says nothing about the others.
	const vMedian = median(cells.filter((c) => isPositive(c?.volts) && c.volts >= rejectBelow && c.volts <= rejectAbove).map((c) => c.volts));
	const rMedian = median(cells.filter((c) => isPositive(c?.resistanceMilliOhms)).map((c) => c.resistanceMilliOhms as number));
	const qMedian = median(cells.filter((c) => isPositive(c?.capacityAh)).map((c) => c.capacityAh as number));
	const limits: InspectionLimits = {
		rejectBelowVolts: rejectBelow,
		rejectAboveVolts: rejectAbove,
		maxChargeVolts: chem.maxChargeVolts,
		resistanceFactor: rFactor,
		...(vMedian === undefined ? {} : { medianVolts: vMedian, lowVoltsBelow: vMedian - lowBy }),
		...(rMedian === undefined ? {} : { medianResistanceMilliOhms: rMedian, highResistanceAbove: rFactor * rMedian }),
		...(qMedian === undefined ? {} : { medianCapacityAh: qMedian, lowCapacityBelow: (1 - shortfall) * qMedian })
	};
	const verdicts = cells.map((cell): CellVerdict => {
		const flags: CellFlag[] = [];
		const volts = cell?.volts;
		if (!isFiniteNumber(volts) || volts < 0) flags.push('missing-volts');
		else if (volts < rejectBelow) flags.push('over-discharged');
		else if (volts > rejectAbove) flags.push('above-max-volts');
		else if (limits.lowVoltsBelow !== undefined && volts < limits.lowVoltsBelow) flags.push('low-volts');
		if (limits.highResistanceAbove !== undefined && isPositive(cell?.resistanceMilliOhms) && cell.resistanceMilliOhms > limits.highResistanceAbove) {
			flags.push('high-resistance');
		}
		if (limits.lowCapacityBelow !== undefined && isFiniteNumber(cell?.capacityAh) && cell.capacityAh < limits.lowCapacityBelow) {
			flags.push('low-capacity');
		}
		const reject = flags.includes('over-discharged') || flags.includes('above-max-volts');
		return { id: String(cell?.id), verdict: reject ? 'reject' : flags.length ? 'suspect' : 'ok', flags };
	});
	return { limits, verdicts };
}

/** The verdicts of inspectBatch alone. */
export function inspectCells(
	chemistry: ChemistryId | Chemistry,
	cells: ArrivalCell[],
	options: InspectOptions = {}
): CellVerdict[] | Failure {
	const inspection = inspectBatch(chemistry, cells, options);
	return 'ok' in inspection ? inspection : inspection.verdicts;
}

/**
 * The suspect flags from least to most risky, the order in which "include suspect cells" takes
 * them. A capacity shortfall costs range, and the matching evens it out across groups (a pack is
 * limited by its weakest group — D. Andrea, references.md §5). High resistance makes a cell carry
 * less than its share of the current and heat within its group (references.md §6). A low arrival
 * voltage can mean self-discharge from an internal fault that grows worse, and a cell with no
 * voltage reading is unknown (common practice). Set by issue 7.
 */
export const SUSPECT_RISK_ORDER: readonly CellFlag[] = ['low-capacity', 'high-resistance', 'low-volts', 'missing-volts'];

/**
 * How far past its threshold a suspect cell is, as a share (0 at the threshold); used to order
 * cells that share their worst flag, the nearest to the threshold first.
 */
function excess(cell: ArrivalCell, flag: CellFlag, limits: InspectionLimits): number {
	if (flag === 'low-capacity' && limits.lowCapacityBelow && isFiniteNumber(cell.capacityAh)) return 1 - cell.capacityAh / limits.lowCapacityBelow;
	if (flag === 'high-resistance' && limits.highResistanceAbove && isFiniteNumber(cell.resistanceMilliOhms)) return cell.resistanceMilliOhms / limits.highResistanceAbove - 1;
	if (flag === 'low-volts' && limits.lowVoltsBelow && isFiniteNumber(cell.volts)) return 1 - cell.volts / limits.lowVoltsBelow;
	return 0;
}

export interface SuspectChoice {
	/** The ids taken, least risky first. */
	used: string[];
	/** The suspect ids left out (they stay spares), least risky first. */
	left: string[];
}

/**
 * Picks the `count` least risky suspect cells: by their worst flag in SUSPECT_RISK_ORDER, then by
 * how many flags they carry, then nearest their threshold; ties keep the input order. Rejected
 * and ok cells are never picked.
 */
export function pickLeastRiskySuspects(
	cells: ArrivalCell[],
	inspection: Inspection,
	count: number
): SuspectChoice {
	const byId = new Map(cells.map((c) => [String(c.id), c]));
	const rank = (flag: CellFlag) => {
		const r = SUSPECT_RISK_ORDER.indexOf(flag);
		return r < 0 ? SUSPECT_RISK_ORDER.length : r;
	};
	const ranked = inspection.verdicts
		.filter((v) => v.verdict === 'suspect' && byId.has(v.id))
		.map((v, order) => {
			const worst = v.flags.reduce((w, f) => (rank(f) > rank(w) ? f : w), v.flags[0]);
			return { id: v.id, worst: rank(worst), flags: v.flags.length, excess: excess(byId.get(v.id)!, worst, inspection.limits), order };
		})
		.sort((a, b) => a.worst - b.worst || a.flags - b.flags || a.excess - b.excess || a.order - b.order)
		.map((r) => r.id);
	const n = Math.max(0, Math.min(ranked.length, Math.floor(count)));
	return { used: ranked.slice(0, n), left: ranked.slice(n) };
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
