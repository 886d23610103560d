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
