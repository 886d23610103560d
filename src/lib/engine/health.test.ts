import { describe, expect, it } from 'vitest';
import { capacityFromRestStates, chargeResistance, chargesUntilFade, linearTrend, type CurrentStepReading, type TrendPoint } from './health';
import type { Failure } from './types';

// Every expected number is worked out by hand in the comments or published (source beside it);
// none is recomputed with the engine's own formulas.

/** The failure of a result that must fail, checked to be in plain words (no camelCase field names). */
function failure(result: { ok: boolean }): Failure {
	expect(result.ok).toBe(false);
	const f = result as Failure;
	expect(f.detail).toBeTypeOf('string');
	expect(f.detail).not.toMatch(/\b[a-z]+[A-Z]\w*/);
	return f;
}

function ok<T extends { ok: boolean }>(result: T): Extract<T, { ok: true }> {
	if (!result.ok) throw new Error(`${(result as unknown as Failure).reason}: ${(result as unknown as Failure).detail}`);
	return result as Extract<T, { ok: true }>;
}

describe('capacityFromRestStates: Ah counted between two rest states', () => {
	it('NMC on the published nodes: 3.5826 V (29.15 %) → 4.0664 V (83.92 %) with 6.5724 Ah put in → 12 Ah', () => {
		// IEEE TIM 2025 NMC 21700 nodes (references.md §2): (0.2915, 3.5826), (0.8392, 4.0664).
		// ΔSoC = 0.8392 − 0.2915 = 0.5477; 6.5724 Ah ÷ 0.5477 = 12.000 Ah (a 4P group of 3 Ah cells).
		const r = ok(capacityFromRestStates({ chemistry: 'nmc', restVoltsBefore: 3.5826, restVoltsAfter: 4.0664, ahBetween: 6.5724 }));
		expect(r.socBefore).toBeCloseTo(0.2915, 9);
		expect(r.socAfter).toBeCloseTo(0.8392, 9);
		expect(r.capacityAh).toBeCloseTo(12, 9);
		expect(r.approximate).toBe(false);
	});

	it('NCA midpoints, a discharge: 3.889 V (85 %) → 3.4905 V (35 %) with 1.25 Ah taken out → 2.5 Ah', () => {
		// Zephyr battery.h Li-ion (references.md §2): 3.842 V at 80 %, 3.936 V at 90 % → midpoint
		// 3.889 V at 85 %; 3.449 V at 30 %, 3.532 V at 40 % → midpoint 3.4905 V at 35 %.
		// ΔSoC = −0.50; |−1.25 Ah| ÷ 0.50 = 2.5 Ah.
		const r = ok(capacityFromRestStates({ chemistry: 'nca', restVoltsBefore: 3.889, restVoltsAfter: 3.4905, ahBetween: -1.25 }));
		expect(r.socBefore).toBeCloseTo(0.85, 9);
		expect(r.socAfter).toBeCloseTo(0.35, 9);
		expect(r.capacityAh).toBeCloseTo(2.5, 9);
	});

	it('LFP: 3.2772 V (29.72 %) → 3.3511 V (98.33 %) with 0.75471 Ah → 1.1 Ah, and the wide range ±10 mV allows on the plateau', () => {
		// IEEE TIM 2025 LFP 18650 nodes (references.md §2): (0.0885, 3.1942) (0.2972, 3.2772)
		// (0.9833, 3.3511) (0.995, 3.418). ΔSoC = 0.6861; 0.75471 ÷ 0.6861 = 1.1000 Ah.
		// ±10 mV by hand on the same segments:
		//   before − 10 mV = 3.2672: 0.0885 + (0.0730 / 0.0830) × 0.2087 = 0.272055
		//   before + 10 mV = 3.2872: 0.2972 + (0.0100 / 0.0739) × 0.6861 = 0.390042
		//   after − 10 mV  = 3.3411: 0.2972 + (0.0639 / 0.0739) × 0.6861 = 0.890458
		//   after + 10 mV  = 3.3611: 0.9833 + (0.0100 / 0.0669) × 0.0117 = 0.985049
		// widest ΔSoC 0.985049 − 0.272055 = 0.712994 → 0.75471 ÷ 0.712994 = 1.0585 Ah
		// narrowest   0.890458 − 0.390042 = 0.500416 → 0.75471 ÷ 0.500416 = 1.5082 Ah
		const r = ok(capacityFromRestStates({ chemistry: 'lfp', restVoltsBefore: 3.2772, restVoltsAfter: 3.3511, ahBetween: 0.75471 }));
		expect(r.capacityAh).toBeCloseTo(1.1, 9);
		expect(r.capacityLowAh).toBeCloseTo(1.0585, 4);
		expect(r.capacityHighAh).toBeCloseTo(1.5082, 4);
	});

	it('a 21-point change is enough, a 19-point change is refused with the reason', () => {
		// Zephyr Li-ion: 3.449 V = 30 %; 3.602 + 0.1 × (3.680 − 3.602) = 3.6098 V = 51 %;
		// 3.532 + 0.9 × (3.602 − 3.532) = 3.595 V = 49 %.
		const enough = ok(capacityFromRestStates({ chemistry: 'nca', restVoltsBefore: 3.449, restVoltsAfter: 3.6098, ahBetween: 0.63 }));
		expect(enough.capacityAh).toBeCloseTo(3, 9); // 0.63 ÷ 0.21
		const f = failure(capacityFromRestStates({ chemistry: 'nca', restVoltsBefore: 3.449, restVoltsAfter: 3.595, ahBetween: 0.57 }));
		expect(f.reason).toBe('soc-change-too-small');
		expect(f.detail).toContain('only 19 % of charge apart');
		expect(f.detail).toContain('at least 20 %');
	});

	it('refuses Ah whose sign disagrees with the voltage, volts off the table, no Ah, an unknown chemistry', () => {
		expect(failure(capacityFromRestStates({ chemistry: 'nmc', restVoltsBefore: 3.5826, restVoltsAfter: 4.0664, ahBetween: -6 })).reason).toBe('sign-mismatch');
		const fell = failure(capacityFromRestStates({ chemistry: 'nmc', restVoltsBefore: 4.0664, restVoltsAfter: 3.5826, ahBetween: 6 }));
		expect(fell.reason).toBe('sign-mismatch');
		expect(fell.detail).toContain('the rest voltage fell');
		const high = failure(capacityFromRestStates({ chemistry: 'nmc', restVoltsBefore: 3.6, restVoltsAfter: 4.25, ahBetween: 6 }));
		expect(high.reason).toBe('outside-rest-curve');
		expect(high.detail).toContain('4.250 V');
		expect(failure(capacityFromRestStates({ chemistry: 'lfp', restVoltsBefore: 1.9, restVoltsAfter: 3.3, ahBetween: 6 })).reason).toBe('outside-rest-curve');
		expect(failure(capacityFromRestStates({ chemistry: 'nmc', restVoltsBefore: 3.6, restVoltsAfter: 4.0, ahBetween: 0 })).reason).toBe('invalid-ah');
		expect(failure(capacityFromRestStates({ chemistry: 'nmc', restVoltsBefore: Number.NaN, restVoltsAfter: 4.0, ahBetween: 1 })).reason).toBe('invalid-volts');
		expect(capacityFromRestStates({ chemistry: 'xyz' as 'nmc', restVoltsBefore: 3.6, restVoltsAfter: 4.0, ahBetween: 1 })).toMatchObject({ ok: false, reason: 'unknown-chemistry' });
	});
});

describe('chargeResistance: ΔV / ΔI at a current step', () => {
	const at = (seconds: number) => Date.UTC(2026, 11, 1, 20, 0, seconds);
	const reading = (volts: number, amps: number, seconds: number): CurrentStepReading => ({ volts, amps, takenAt: at(seconds) });

	it.each([
		// [before, after, mΩ by hand]
		// charge starts: (3.468 − 3.412) V ÷ (10 − 0) A = 0.056 / 10 = 5.6 mΩ
		['charge starts', reading(3.412, 0, 0), reading(3.468, 10, 30), 5.6, 0.056, 10],
		// charge stops: (3.490 − 3.550) V ÷ (0 − 20) A = −0.060 / −20 = 3.0 mΩ
		['charge stops', reading(3.55, 20, 0), reading(3.49, 0, 45), 3.0, -0.06, -20],
		// discharge starts: (3.250 − 3.300) V ÷ (−25 − 0) A = −0.050 / −25 = 2.0 mΩ
		['discharge starts', reading(3.3, 0, 0), reading(3.25, -25, 20), 2.0, -0.05, -25],
		// current raised: (3.520 − 3.500) V ÷ (15 − 5) A = 0.020 / 10 = 2.0 mΩ
		['current raised', reading(3.5, 5, 0), reading(3.52, 15, 60), 2.0, 0.02, 10]
	])('%s', (_name, before, after, milliohms, deltaVolts, deltaAmps) => {
		const r = ok(chargeResistance(before, after));
		expect(r.milliohms).toBeCloseTo(milliohms, 9);
		expect(r.deltaVolts).toBeCloseTo(deltaVolts, 12);
		expect(r.deltaAmps).toBeCloseTo(deltaAmps, 12);
	});

	it('gives the ± of one last digit (1 mV) on each reading: 2 mV ÷ 10 A = 0.2 mΩ', () => {
		expect(ok(chargeResistance(reading(3.412, 0, 0), reading(3.468, 10, 30))).uncertaintyMilliohms).toBeCloseTo(0.2, 12);
	});

	it('refuses readings more than 2 minutes apart and says what to do; the limit is an option', () => {
		const f = failure(chargeResistance(reading(3.412, 0, 0), reading(3.468, 10, 180)));
		expect(f.reason).toBe('readings-too-far-apart');
		expect(f.detail).toContain('3.0 minutes apart');
		expect(f.detail).toContain('Take a reading just before and within a minute after the current changes.');
		expect(chargeResistance(reading(3.412, 0, 0), reading(3.468, 10, 120)).ok).toBe(true);
		expect(failure(chargeResistance(reading(3.412, 0, 0), reading(3.468, 10, 45), { maxGapMs: 30_000 })).reason).toBe('readings-too-far-apart');
	});

	it('refuses a small current step, a voltage against the current, no jump, readings out of order', () => {
		const small = failure(chargeResistance(reading(3.412, 0, 0), reading(3.414, 0.3, 10)));
		expect(small.reason).toBe('current-step-too-small');
		expect(small.detail).toContain('only 0.30 A');
		const against = failure(chargeResistance(reading(3.468, 0, 0), reading(3.412, 10, 10)));
		expect(against.reason).toBe('inconsistent-sign');
		expect(against.detail).toContain('fell when the current rose');
		expect(failure(chargeResistance(reading(3.412, 0, 0), reading(3.412, 10, 10))).reason).toBe('inconsistent-sign');
		expect(failure(chargeResistance(reading(3.412, 0, 30), reading(3.468, 10, 0))).reason).toBe('readings-out-of-order');
		expect(failure(chargeResistance(reading(Number.NaN, 0, 0), reading(3.468, 10, 10))).reason).toBe('invalid-reading');
	});
});

// NIST Statistical Reference Datasets, linear least squares, "Norris" (lower difficulty, 36
// observations, y = B0 + B1·x): https://www.itl.nist.gov/div898/strd/lls/data/Norris.shtml
// Data as published in Norris.dat (y, x pairs), checked against the copy in GSL's fit/test.c.
const norrisY = [
	0.1, 338.8, 118.1, 888.0, 9.2, 228.1, 668.5, 998.5, 449.1, 778.9, 559.2, 0.3, 0.1, 778.1, 668.8, 339.3, 448.9, 10.8,
	557.7, 228.3, 998.0, 888.8, 119.6, 0.3, 0.6, 557.6, 339.3, 888.0, 998.5, 778.9, 10.2, 117.6, 228.9, 668.4, 449.2, 0.2
];
const norrisX = [
	0.2, 337.4, 118.2, 884.6, 10.1, 226.5, 666.3, 996.3, 448.6, 777.0, 558.2, 0.4, 0.6, 775.5, 666.9, 338.0, 447.5, 11.6,
	556.0, 228.1, 995.8, 887.6, 120.2, 0.3, 0.3, 556.8, 339.1, 887.2, 999.0, 779.0, 11.1, 118.3, 229.2, 669.1, 448.9, 0.5
];
// Certified values (NIST StRD Norris).
const norrisCertified = {
	intercept: -0.262323073774029,
	interceptStdError: 0.232818234301152,
	slope: 1.00211681802045,
	slopeStdError: 0.429796848199937e-3,
	residualStdDev: 0.884796396144373
};

const relClose = (actual: number, expected: number, rel = 1e-9) => expect(Math.abs(actual - expected)).toBeLessThanOrEqual(rel * Math.abs(expected));

describe('linearTrend: least squares with standard errors', () => {
	it('NIST StRD Norris: certified slope, intercept, their standard errors and the residual SD to 1e-9', () => {
		expect(norrisX).toHaveLength(36);
		expect(norrisY).toHaveLength(36);
		const r = ok(linearTrend(norrisX.map((x, i) => ({ x, y: norrisY[i] }))));
		expect(r.n).toBe(36);
		for (const key of Object.keys(norrisCertified) as (keyof typeof norrisCertified)[]) relClose(r[key], norrisCertified[key]);
	});

	it('Norris with x moved by 10^7 (like a large time axis; the fit on raw x would lose the 1e-9): the same certified slope, SE and residual SD', () => {
		// Moving x leaves slope, its SE and the residual SD unchanged; the intercept moves by −slope × 10^7.
		const r = ok(linearTrend(norrisX.map((x, i) => ({ x: x + 1e7, y: norrisY[i] }))));
		relClose(r.slope, norrisCertified.slope);
		relClose(r.slopeStdError, norrisCertified.slopeStdError, 1e-8);
		relClose(r.residualStdDev, norrisCertified.residualStdDev, 1e-8);
	});

	it('a small case by hand: (0,1) (1,3) (2,2) (3,5)', () => {
		// x̄ 1.5, ȳ 2.75, Sxx = 2.25 + 0.25 + 0.25 + 2.25 = 5,
		// Sxy = (−1.5)(−1.75) + (−0.5)(0.25) + (0.5)(−0.75) + (1.5)(2.25) = 5.5 → slope 1.1, intercept 2.75 − 1.65 = 1.1.
		// Residuals −0.1, 0.8, −1.3, 0.6 → SSE 2.7, s² = 2.7 / 2 = 1.35, s = 1.161895;
		// SE slope √(1.35 / 5) = √0.27 = 0.519615; SE intercept √(1.35 × (1/4 + 2.25/5)) = √0.945 = 0.972111.
		const r = ok(linearTrend([{ x: 0, y: 1 }, { x: 1, y: 3 }, { x: 2, y: 2 }, { x: 3, y: 5 }]));
		expect(r.slope).toBeCloseTo(1.1, 12);
		expect(r.intercept).toBeCloseTo(1.1, 12);
		expect(r.residualStdDev).toBeCloseTo(1.161895, 6);
		expect(r.slopeStdError).toBeCloseTo(0.519615, 6);
		expect(r.interceptStdError).toBeCloseTo(0.972111, 6);
	});

	it('refuses fewer than three points, points at one x, and non-numbers', () => {
		const two: TrendPoint[] = [{ x: 0, y: 1 }, { x: 1, y: 2 }];
		const f = failure(linearTrend(two));
		expect(f.reason).toBe('too-few-points');
		expect(f.detail).toContain('at least three points; there are 2');
		expect(failure(linearTrend([{ x: 2, y: 1 }, { x: 2, y: 2 }, { x: 2, y: 3 }])).reason).toBe('no-spread');
		expect(failure(linearTrend([{ x: 0, y: 1 }, { x: 1, y: Number.NaN }, { x: 2, y: 3 }])).reason).toBe('invalid-points');
	});
});

describe('chargesUntilFade: when the capacity reaches 80 % of the first', () => {
	it('3.00, 2.97, 2.94, 2.91 Ah at charges 0..3: 2.40 Ah at charge 20, 17 charges after the last', () => {
		// Loss 0.03 Ah per charge from 3.00 Ah; 80 % × 3.00 = 2.40 Ah; (3.00 − 2.40) / 0.03 = 20; 20 − 3 = 17.
		const r = ok(chargesUntilFade([0, 1, 2, 3].map((charge) => ({ charge, capacityAh: [3.0, 2.97, 2.94, 2.91][charge] }))));
		expect(r.atCharge).toBeCloseTo(20, 9);
		expect(r.chargesFromLast).toBeCloseTo(17, 9);
		expect(r.slopeAhPerCharge).toBeCloseTo(-0.03, 12);
		expect(r.slopeStdError).toBeLessThan(1e-12);
		expect(r.firstCapacityAh).toBe(3);
		expect(r.targetCapacityAh).toBeCloseTo(2.4, 12);
		// 90 %: 2.70 Ah, (3.00 − 2.70) / 0.03 = 10 → 7 after the last.
		expect(ok(chargesUntilFade([{ charge: 3, capacityAh: 2.91 }, { charge: 0, capacityAh: 3 }, { charge: 2, capacityAh: 2.94 }, { charge: 1, capacityAh: 2.97 }], { fraction: 0.9 })).chargesFromLast).toBeCloseTo(7, 9);
	});

	it('scattered capacities every 10 charges, by hand', () => {
		// charges 0, 10, 20, 30; Ah 3.00, 2.96, 2.95, 2.89. x̄ 15, Sxx 500, ȳ 2.95,
		// Sxy = (−15)(0.05) + (−5)(0.01) + 5(0) + 15(−0.06) = −1.7 → slope −0.0034 Ah/charge,
		// intercept 2.95 + 0.0034 × 15 = 3.001. Residuals −0.001, −0.007, 0.017, −0.009 → SSE 420e-6,
		// s² 210e-6, SE √(210e-6 / 500) = 6.4807e-4; −0.0034 + 2 × 6.4807e-4 = −0.0021 < 0: a clear loss.
		// Target 0.8 × 3.00 (measured first) = 2.40 → (2.40 − 3.001) / −0.0034 = 176.765 → 146.765 after charge 30.
		const r = ok(chargesUntilFade([{ charge: 0, capacityAh: 3 }, { charge: 10, capacityAh: 2.96 }, { charge: 20, capacityAh: 2.95 }, { charge: 30, capacityAh: 2.89 }]));
		expect(r.slopeAhPerCharge).toBeCloseTo(-0.0034, 12);
		expect(r.slopeStdError).toBeCloseTo(6.4807e-4, 7);
		expect(r.atCharge).toBeCloseTo(176.765, 3);
		expect(r.chargesFromLast).toBeCloseTo(146.765, 3);
	});

	it('refuses two points and says what is missing', () => {
		const f = failure(chargesUntilFade([{ charge: 0, capacityAh: 3 }, { charge: 1, capacityAh: 2.9 }]));
		expect(f.reason).toBe('too-few-points');
		expect(f.detail).toContain('three or more charges; there are 2 so far');
	});

	it.each([
		['flat', [3.0, 3.0, 3.0], 'do not fall'],
		['rising', [2.9, 2.95, 3.0], 'do not fall'],
		// 3.00, 2.90, 3.02, 2.95: slope −0.003, residuals 0.028, −0.069, 0.054, −0.013 → SSE 0.00863,
		// SE √(0.00863 / 2 / 5) = 0.0294; −0.003 + 2 × 0.0294 > 0: the fall is inside the scatter.
		['falling inside its scatter', [3.0, 2.9, 3.02, 2.95], 'smaller than the scatter']
	])('no clear loss: %s', (_name, capacities, words) => {
		const f = failure(chargesUntilFade(capacities.map((capacityAh, charge) => ({ charge, capacityAh }))));
		expect(f.reason).toBe('no-clear-loss');
		expect(f.detail).toContain(words);
	});

	it('refuses a group already below 80 % and a projection far beyond the measured charges', () => {
		// 3.0, 2.5, 2.0: 2.40 Ah at charge (3.0 − 2.4) / 0.5 = 1.2, before the last (2).
		expect(failure(chargesUntilFade([3.0, 2.5, 2.0].map((capacityAh, charge) => ({ charge, capacityAh })))).reason).toBe('already-below');
		// 3.000, 2.999, 2.998: 2.40 Ah at charge 0.6 / 0.001 = 600, 598 after the last, over 10 × the 2 measured.
		const far = failure(chargesUntilFade([3.0, 2.999, 2.998].map((capacityAh, charge) => ({ charge, capacityAh }))));
		expect(far.reason).toBe('projection-too-far');
		expect(far.detail).toContain('about 598 more charges');
	});

	it('refuses bad points and fractions', () => {
		expect(failure(chargesUntilFade([{ charge: 0, capacityAh: 3 }, { charge: 1, capacityAh: 0 }, { charge: 2, capacityAh: 2.9 }])).reason).toBe('invalid-points');
		expect(failure(chargesUntilFade([{ charge: 1, capacityAh: 3 }, { charge: 1, capacityAh: 2.9 }, { charge: 1, capacityAh: 2.8 }])).reason).toBe('no-spread');
		expect(failure(chargesUntilFade([0, 1, 2].map((charge) => ({ charge, capacityAh: 3 - charge * 0.03 })), { fraction: 1.2 })).reason).toBe('invalid-fraction');
	});
});
