/** The engine's pack ratings for a cell spec as stored (nulls for "not given"), on server and page alike. */
import { packRatings, type Chemistry } from '$lib/engine';

export type SpecForRatings = {
	chemistry: Chemistry;
	capacityAh: number;
	maxContinuousAmps: number;
	maxBurstAmps: number | null;
	maxChargeAmps: number;
	resistanceMilliOhms: number | null;
};

export function rateSpecPack(
	spec: SpecForRatings,
	pack: { series: number; parallel: number; measuredPeakAmps: number | null }
) {
	return packRatings({
		chemistry: spec.chemistry,
		cell: {
			capacityAh: spec.capacityAh,
			maxContinuousAmps: spec.maxContinuousAmps,
			maxBurstAmps: spec.maxBurstAmps ?? undefined,
			maxChargeAmps: spec.maxChargeAmps,
			resistanceMilliOhms: spec.resistanceMilliOhms ?? undefined
		},
		series: pack.series,
		parallel: pack.parallel,
		measuredPeakAmps: pack.measuredPeakAmps ?? undefined
	});
}

/**
 * DC touch-safety line, volts. Common practice: 60 V DC is the upper end of the extra-low-voltage
 * band below which DC is usually treated as safe to touch in dry conditions (IEC 61140's ELV band
 * and the SELV limits of equipment standards, from memory). Above it a pack can give a dangerous
 * shock, so the pack's full-charge voltage is compared with it.
 */
export const SHOCK_HAZARD_VOLTS = 60;

export type PackCaution = 'shock-hazard' | 'over-rating' | 'no-bms';

/**
 * The cautions a pack's ratings call for, most serious first: a full-charge voltage above
 * SHOCK_HAZARD_VOLTS, a measured peak over the cells' rating, and no BMS (each group must then be
 * watched by a person during a charge).
 */
export function packCautions(
	ratings: { maxVolts: number; peakVerdict?: 'within-continuous' | 'within-burst' | 'over-rating' },
	pack: { bmsFitted: boolean }
): PackCaution[] {
	const cautions: PackCaution[] = [];
	if (ratings.maxVolts > SHOCK_HAZARD_VOLTS) cautions.push('shock-hazard');
	if (ratings.peakVerdict === 'over-rating') cautions.push('over-rating');
	if (!pack.bmsFitted) cautions.push('no-bms');
	return cautions;
}
