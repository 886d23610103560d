import { describe, expect, it } from 'vitest';
import { packRatings } from './pack';

describe('packRatings', () => {
	it.each([
		// [chemistry, S, P, nominal V, max V, min V] — per-cell limits from BU-216; trade names in the comment.
		['nmc', 10, 4, 36, 42, 30], // the "36 V" e-bike pack (common practice)
		['nmc', 13, 4, 46.8, 54.6, 39], // the "48 V" e-bike pack (common practice)
		['lfp', 16, 1, 51.2, 58.4, 40], // the "48 V" LFP house bank (common practice)
		['lfp', 4, 1, 12.8, 14.6, 10], // the "12 V" LFP battery (common practice)
		['lto', 6, 1, 14.4, 17.1, 10.8]
	] as const)('%s %iS%iP: %f V nominal, %f V full, %f V empty', (chemistry, series, parallel, nominal, max, min) => {
		const r = packRatings({ chemistry, cell: { capacityAh: 3, maxContinuousAmps: 10, maxChargeAmps: 3 }, series, parallel });
		expect(r.ok && r.nominalVolts).toBeCloseTo(nominal, 9);
		expect(r.ok && r.maxVolts).toBeCloseTo(max, 9);
		expect(r.ok && r.minVolts).toBeCloseTo(min, 9);
	});

	it('16S4P of 3 Ah NMC (product brief example): 12 Ah, 57.6 V × 12 Ah = 691.2 Wh, currents × 4', () => {
		const r = packRatings({ chemistry: 'nmc', cell: { capacityAh: 3, maxContinuousAmps: 15, maxBurstAmps: 30, maxChargeAmps: 4, resistanceMilliOhms: 20 }, series: 16, parallel: 4 });
		expect(r).toMatchObject({ ok: true, capacityAh: 12, continuousAmps: 60, burstAmps: 120, maxChargeAmps: 16, resistanceMilliOhms: 80 });
		expect(r.ok && r.energyWh).toBeCloseTo(691.2, 9);
	});

	it.each([
		[50, 'within-continuous', 12.5],
		[60, 'within-continuous', 15],
		[100, 'within-burst', 25],
		[130, 'over-rating', 32.5]
	] as const)('a measured peak of %f A on 4P: %s (%f A per cell)', (peak, verdict, perCell) => {
		const r = packRatings({ chemistry: 'nmc', cell: { capacityAh: 3, maxContinuousAmps: 15, maxBurstAmps: 30, maxChargeAmps: 4 }, series: 16, parallel: 4, measuredPeakAmps: peak });
		expect(r).toMatchObject({ ok: true, peakVerdict: verdict, peakPerCellAmps: perCell });
	});

	it('with no burst rating, the continuous rating is the burst rating', () => {
		const r = packRatings({ chemistry: 'nmc', cell: { capacityAh: 3, maxContinuousAmps: 15, maxChargeAmps: 4 }, series: 1, parallel: 2, measuredPeakAmps: 31 });
		expect(r).toMatchObject({ ok: true, burstAmps: 30, peakVerdict: 'over-rating' });
	});

	it.each([
		['zero series', { series: 0 }],
		['fractional parallel', { parallel: 1.5 }],
		['no capacity', { cell: { capacityAh: 0, maxContinuousAmps: 1, maxChargeAmps: 1 } }],
		['negative peak', { measuredPeakAmps: -1 }],
		['unknown chemistry', { chemistry: 'lipo' }]
	])('refuses %s', (_, patch) => {
		const input = { chemistry: 'nmc', cell: { capacityAh: 3, maxContinuousAmps: 10, maxChargeAmps: 3 }, series: 4, parallel: 2, ...patch };
		expect(packRatings(input as never)).toMatchObject({ ok: false });
	});
});
