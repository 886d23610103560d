import { describe, expect, it } from 'vitest';
import type { Chemistry } from '$lib/engine';
import { chemistries } from '$lib/engine';
import { packCautions, rateSpecPack } from './pack-ratings';

const cell = (chemistry: Chemistry) => ({
	chemistry,
	// Invented cell ratings: only the chemistry's full-charge voltage matters for the shock line.
	capacityAh: 4,
	maxContinuousAmps: 15,
	maxBurstAmps: 30,
	maxChargeAmps: 4,
	resistanceMilliOhms: null
});

describe('packCautions: the shock line at 60 V DC (common practice, the ELV band)', () => {
	// Full charge per cell from BU-216 "Summary Table of Lithium-based Batteries" (references.md §1):
	// NMC and NCA 4.20 V, LFP 3.65 V, LTO 2.85 V. The pack's full charge is series × that.
	it.each([
		{ chemistry: 'nmc', series: 16, fullVolts: 67.2, shock: true }, // 16 × 4.20 V
		{ chemistry: 'nmc', series: 14, fullVolts: 58.8, shock: false }, // 14 × 4.20 V
		{ chemistry: 'nca', series: 13, fullVolts: 54.6, shock: false }, // 13 × 4.20 V
		{ chemistry: 'lfp', series: 16, fullVolts: 58.4, shock: false }, // 16 × 3.65 V
		{ chemistry: 'lfp', series: 17, fullVolts: 62.05, shock: true }, // 17 × 3.65 V
		{ chemistry: 'lto', series: 24, fullVolts: 68.4, shock: true } // 24 × 2.85 V
	] as const)('$series S $chemistry: $fullVolts V at full charge → shock caution $shock', ({ chemistry, series, fullVolts, shock }) => {
		const ratings = rateSpecPack(cell(chemistries[chemistry]), { series, parallel: 2, measuredPeakAmps: null });
		if (!ratings.ok) throw new Error(ratings.detail);
		expect(ratings.maxVolts).toBeCloseTo(fullVolts, 6);
		expect(packCautions(ratings, { bmsFitted: true }).includes('shock-hazard')).toBe(shock);
	});
});

describe('packCautions: current and BMS', () => {
	it('flags a measured peak over the cells’ burst rating', () => {
		// 13S4P of 15 A continuous / 30 A burst cells: 130 A is 32.5 A per cell, over the 30 A burst.
		const ratings = rateSpecPack(cell(chemistries.nmc), { series: 13, parallel: 4, measuredPeakAmps: 130 });
		if (!ratings.ok) throw new Error(ratings.detail);
		expect(packCautions(ratings, { bmsFitted: true })).toEqual(['over-rating']);
	});

	it('does not flag a peak within the burst rating', () => {
		// 100 A over 4 cells is 25 A per cell: above 15 A continuous, within 30 A burst.
		const ratings = rateSpecPack(cell(chemistries.nmc), { series: 13, parallel: 4, measuredPeakAmps: 100 });
		if (!ratings.ok) throw new Error(ratings.detail);
		expect(packCautions(ratings, { bmsFitted: true })).toEqual([]);
	});

	it('reminds that every group must be watched when no BMS is fitted, after the more serious cautions', () => {
		const ratings = rateSpecPack(cell(chemistries.nmc), { series: 16, parallel: 4, measuredPeakAmps: 130 });
		if (!ratings.ok) throw new Error(ratings.detail);
		expect(packCautions(ratings, { bmsFitted: false })).toEqual(['shock-hazard', 'over-rating', 'no-bms']);
	});
});
