import { describe, expect, it } from 'vitest';
import { chargeEnvelope, fitCvTaperFactor, modelHours } from './calibration';
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

	// In-sample by construction: k is fitted to the envelope, so these checks prove the fit was done
	// right, not that the model predicts. Out-of-sample checks are in charge.test.ts (docs/engine.md).
	it('the fit worked by hand: a (pre + CC) and b (CV at k = 1) per point, then k', () => {
		// Start: NMC full discharge 3.0 V on the IEEE TIM 2025 table = 0.0237105 (worked out in
		// charge.test.ts); LFP 2.5 V between (0.0033, 2.4177) and (0.0117, 2.7405):
		// 0.0033 + 0.0084 × 0.0823 / 0.3228 = 0.0054416. No pre-charge: each starts at, not below, it.
		// a = (1 − 0.25·C − start) / C; b = 0.25·C × ln(C / cut-off) / (C − cut-off)   (1 Ah cell)
		const hand = [
			// 0.2C, 0.01C: a = (0.95 − 0.0237105) / 0.2 = 4.631447; b = 0.05 × ln 20 / 0.19 = 0.788351
			{ a: 4.631447, b: 0.788351 },
			// 0.5C, 0.01C: a = (0.875 − 0.0237105) / 0.5 = 1.702579; b = 0.125 × ln 50 / 0.49 = 0.997965
			{ a: 1.702579, b: 0.997965 },
			// 1C, 0.05C: a = 0.75 − 0.0237105 = 0.726290; b = 0.25 × ln 20 / 0.95 = 0.788351
			{ a: 0.72629, b: 0.788351 },
			// LFP 1C, 0.05C: a = 0.75 − 0.0054416 = 0.744558; b = 0.788351
			{ a: 0.744558, b: 0.788351 }
		];
		chargeEnvelope.forEach((point, i) => {
			const a = modelHours(point, 1e-12);
			expect(a).toBeCloseTo(hand[i].a, 5);
			expect(modelHours(point, 1) - a).toBeCloseTo(hand[i].b, 5);
		});
		// Li-ion: k = Σ (b/T)(T − a)/T ÷ Σ (b/T)² over T = 6, 3, 2.5 h:
		//   b/T:        0.131392, 0.332655, 0.315340;   (T − a)/T: 0.228092, 0.432474, 0.709484
		//   numerator   = 0.131392×0.228092 + 0.332655×0.432474 + 0.315340×0.709484 = 0.397563
		//   denominator = 0.131392² + 0.332655² + 0.315340² = 0.227363
		//   k = 0.397563 / 0.227363 = 1.748584 → 1.75
		expect(fitCvTaperFactor(chargeEnvelope.filter((p) => p.family === 'li-ion')).k).toBeCloseTo(1.748584, 4);
		expect(cvTaperFactors['li-ion']).toBe(1.75);
		// LFP, one point: k = (2 − 0.744558) / 0.788351 = 1.592491 → 1.59
		expect(fitCvTaperFactor(chargeEnvelope.filter((p) => p.family === 'lfp')).k).toBeCloseTo(1.592491, 4);
		expect(cvTaperFactors.lfp).toBe(1.59);
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
