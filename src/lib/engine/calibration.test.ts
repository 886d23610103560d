import { describe, expect, it } from 'vitest';
import { chargeEnvelope, fitCvTaperFactor } from './calibration';
import { cvTaperFactors } from './chemistry';

describe('CV calibration factor k', () => {
	it('the envelope the fit uses carries the published values (references.md §3)', () => {
		expect(chargeEnvelope.map((p) => [p.family, p.cRate, p.terminationC, p.hours])).toEqual([
			['li-ion', 0.2, 0.01, 6], // datasheet: 0.2C, 0.01C cut-off ≈ 6 h
			['li-ion', 0.5, 0.01, 3], // datasheet: 0.5C, 0.01C ≈ 3 h
			['li-ion', 1, 0.05, 2.5], // BU-409: 1C ≈ 2–3 h (middle)
			['lfp', 1, 0.05, 2] // LFP datasheet: 1C to 3.65 V, 0.05C ≈ 2.0 h
		]);
	});

	it.each(['li-ion', 'lfp'] as const)('%s: the factor in chemistry.ts is the least-squares fit, rounded to 0.01', (family) => {
		const fit = fitCvTaperFactor(chargeEnvelope.filter((p) => p.family === family));
		expect(cvTaperFactors[family]).toBeCloseTo(fit.k, 2);
		for (const row of fit.rows) expect(Math.abs(row.errorPercent)).toBeLessThanOrEqual(25);
	});

	it('k > 1: the published saturation is slower than a single exponential from I to Iterm', () => {
		expect(cvTaperFactors['li-ion']).toBeGreaterThan(1);
		expect(cvTaperFactors.lfp).toBeGreaterThan(1);
	});

	it('LTO borrows LFP\'s k: no published LTO charge time (references.md has none)', () => {
		expect(cvTaperFactors.lto).toBe(cvTaperFactors.lfp);
	});
});
