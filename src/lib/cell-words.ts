/** Plain words for the engine's inspection results (shared by pages, server messages and tests). */
import type { CellFlag, CellVerdict, InspectionLimits } from '$lib/engine';

/** One word per verdict; a rejected cell is "rejected" on every screen and in every message. */
export const verdictWords: Record<CellVerdict['verdict'], string> = {
	ok: 'ok',
	suspect: 'suspect',
	reject: 'rejected'
};

/** Short words for a flag where there is no room for the numbers (filters, badges). */
export const flagWords: Record<CellFlag, string> = {
	'over-discharged': 'over-discharged',
	'above-max-volts': 'over-charged',
	'low-volts': 'low voltage',
	'high-resistance': 'high resistance',
	'low-capacity': 'low capacity',
	'missing-volts': 'no voltage measured'
};

export const placementWords = {
	unsorted: 'not placed',
	group: 'in a group',
	spare: 'spare',
	rejected: 'rejected'
} as const;

const v = (volts: number) => `${volts.toFixed(2)} V`;
const mOhm = (r: number) => `${r.toFixed(1)} mΩ`;
const ah = (a: number) => `${a.toFixed(2)} Ah`;

/** What was measured on one cell (the inventory's fields). */
export type MeasuredCell = { arrivalVolts: number; resistanceMilliOhms: number | null; capacityAh: number | null };

/**
 * One sentence per flag, with the cell's value, the threshold it crossed and what to do — the
 * reason a person reads next to the cell.
 */
export function flagReason(flag: CellFlag, cell: MeasuredCell, limits: InspectionLimits): string {
	switch (flag) {
		case 'over-discharged':
			return `arrived at ${v(cell.arrivalVolts)}, below the ${v(limits.rejectBelowVolts)} minimum: over-discharged — do not charge it; tape its terminals and take it to a recycler`;
		case 'above-max-volts':
			return `arrived at ${v(cell.arrivalVolts)}, above the ${v(limits.maxChargeVolts)} charge limit: over-charged — do not charge or use it; keep it on a non-flammable surface, tape its terminals and take it to a recycler`;
		case 'low-volts':
			return limits.medianVolts === undefined
				? `arrived low at ${v(cell.arrivalVolts)}`
				: `arrived at ${v(cell.arrivalVolts)}, ${Math.round((limits.medianVolts - cell.arrivalVolts) * 1000)} mV below the batch median ${v(limits.medianVolts)}: it may lose charge by itself — measure it again after a week's rest before using it`;
		case 'high-resistance':
			return cell.resistanceMilliOhms === null || limits.medianResistanceMilliOhms === undefined
				? 'resistance high for this batch'
				: `resistance ${mOhm(cell.resistanceMilliOhms)}, ${(cell.resistanceMilliOhms / limits.medianResistanceMilliOhms).toFixed(1)} × the batch median ${mOhm(limits.medianResistanceMilliOhms)}: in a group it carries less than its share of the current and runs warmer`;
		case 'low-capacity':
			return cell.capacityAh === null || limits.medianCapacityAh === undefined
				? 'capacity low for this batch'
				: `capacity ${ah(cell.capacityAh)}, ${Math.round((1 - cell.capacityAh / limits.medianCapacityAh) * 100)} % under the batch median ${ah(limits.medianCapacityAh)}: its group ends up smaller than the others unless the matching makes up for it`;
		case 'missing-volts':
			return 'no voltage measured: measure it before it goes into a group';
	}
}

/** Every reason of one cell, in the order of its flags. */
export function cellReasons(flags: CellFlag[], cell: MeasuredCell, limits: InspectionLimits): string[] {
	return flags.map((flag) => flagReason(flag, cell, limits));
}
