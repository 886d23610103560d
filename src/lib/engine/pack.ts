import { resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
import { fail, isNonNegative, isPositive, type Result } from './types';

export interface PackCell {
	capacityAh: number;
	maxContinuousAmps: number;
	/** Absent = the continuous rating. */
	maxBurstAmps?: number;
	maxChargeAmps: number;
	resistanceMilliOhms?: number;
}

export interface PackRatings {
	nominalVolts: number;
	maxVolts: number;
	/** series × the chemistry's full-discharge voltage. */
	minVolts: number;
	capacityAh: number;
	/** nominalVolts × capacityAh. */
	energyWh: number;
	continuousAmps: number;
	burstAmps: number;
	maxChargeAmps: number;
	/** series × cell resistance / parallel, when the cell's resistance is known (cells only, no links). */
	resistanceMilliOhms?: number;
	peakPerCellAmps?: number;
	peakVerdict?: 'within-continuous' | 'within-burst' | 'over-rating';
}

/** Pack volts, capacity, energy and current limits for series × parallel cells; a measured peak checked per cell. */
export function packRatings(input: {
	chemistry: ChemistryId | Chemistry;
	cell: PackCell;
	series: number;
	parallel: number;
	measuredPeakAmps?: number;
}): Result<PackRatings> {
	if (!input || typeof input !== 'object') return fail('invalid-input', 'A pack input object is needed.');
	const chem = resolveChemistry(input.chemistry);
	if ('ok' in chem) return chem;
	const { cell, series: S, parallel: P } = input;
	if (!Number.isInteger(S) || S < 1 || !Number.isInteger(P) || P < 1) {
		return fail('invalid-topology', 'Series and parallel must be whole numbers ≥ 1.');
	}
	if (!cell || !isPositive(cell.capacityAh) || !isPositive(cell.maxContinuousAmps) || !isPositive(cell.maxChargeAmps)) {
		return fail('invalid-cell', 'The cell needs positive capacity, continuous and charge ratings.');
	}
	if (cell.maxBurstAmps !== undefined && !isPositive(cell.maxBurstAmps)) return fail('invalid-cell', 'Burst rating must be positive.');
	if (cell.resistanceMilliOhms !== undefined && !isNonNegative(cell.resistanceMilliOhms)) {
		return fail('invalid-cell', 'Resistance must be zero or more.');
	}
	if (input.measuredPeakAmps !== undefined && !isNonNegative(input.measuredPeakAmps)) {
		return fail('invalid-peak', 'The measured peak must be zero or more amps.');
	}
	const burstCell = Math.max(cell.maxBurstAmps ?? cell.maxContinuousAmps, cell.maxContinuousAmps);
	const ratings: PackRatings = {
		nominalVolts: S * chem.nominalVolts,
		maxVolts: S * chem.maxChargeVolts,
		minVolts: S * chem.fullDischargeVolts,
		capacityAh: P * cell.capacityAh,
		energyWh: S * chem.nominalVolts * P * cell.capacityAh,
		continuousAmps: P * cell.maxContinuousAmps,
		burstAmps: P * burstCell,
		maxChargeAmps: P * cell.maxChargeAmps
	};
	if (cell.resistanceMilliOhms !== undefined) ratings.resistanceMilliOhms = (S * cell.resistanceMilliOhms) / P;
	if (input.measuredPeakAmps !== undefined) {
		const perCell = input.measuredPeakAmps / P;
		ratings.peakPerCellAmps = perCell;
		ratings.peakVerdict =
			perCell <= cell.maxContinuousAmps ? 'within-continuous' : perCell <= burstCell ? 'within-burst' : 'over-rating';
	}
	return { ok: true, ...ratings };
}
