import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { chemistries, type ChemistryId } from './chemistry';
import { restVoltageFromSoc, socFromRestVoltage } from './soc';

const ids = Object.keys(chemistries) as ChemistryId[];

function soc(id: ChemistryId, volts: number, tol?: number) {
	const r = socFromRestVoltage(id, volts, tol);
	if (!r.ok) throw new Error(r.reason);
	return r;
}

describe('rest voltage ↔ state of charge', () => {
	it.each([
		// Zephyr battery.h Li-ion (NCA 18650) nodes: 0 % 2.502, 50 % 3.602, 100 % 4.032.
		['nca', 0, 2.502],
		['nca', 0.5, 3.602],
		['nca', 1, 4.032],
		// Halfway between Zephyr's 40 % (3.532) and 50 % (3.602): linear interpolation.
		['nca', 0.45, 3.567],
		// Halfway between Zephyr's 90 % (3.936) and 100 % (4.032).
		['nca', 0.95, 3.984],
		// IEEE TIM 2025 NMC 21700 nodes (0.4523, 3.6941) and (0.8392, 4.0664); their midpoint.
		['nmc', 0.4523, 3.6941],
		['nmc', (0.4523 + 0.8392) / 2, (3.6941 + 4.0664) / 2],
		// IEEE TIM 2025 LFP nodes (0.2972, 3.2772), (0.9833, 3.3511); their midpoint.
		['lfp', 0.2972, 3.2772],
		['lfp', (0.2972 + 0.9833) / 2, (3.2772 + 3.3511) / 2],
		// LCO and LMO share the Zephyr curve (marked approximate).
		['lco', 0.5, 3.602],
		['lmo', 0.3, 3.449]
	] as const)('%s at soc %f rests at %f V', (id, s, volts) => {
		expect(restVoltageFromSoc(id, s)).toBeCloseTo(volts, 4);
		expect(soc(id, volts).soc).toBeCloseTo(s, 4);
	});

	it('LFP at its own 50 % point: ±10 mV spans at least 10 points (flat plateau, references.md §2)', () => {
		// By hand on the IEEE TIM 2025 LFP nodes (0.2972, 3.2772) and (0.9833, 3.3511):
		// 50 % rests at 3.2772 + 0.0739 × 0.2028 / 0.6861 = 3.299044 V; ±10 mV stays on that segment,
		// so it spans 0.02 × 0.6861 / 0.0739 = 0.185683 of soc.
		expect(restVoltageFromSoc('lfp', 0.5)).toBeCloseTo(3.299044, 6);
		const r = soc('lfp', 3.299044, 0.01);
		expect(r.socHigh - r.socLow).toBeGreaterThanOrEqual(0.1);
		expect(r.socHigh - r.socLow).toBeCloseTo(0.185683, 5);
	});

	it('NMC at its own 50 % point: ±10 mV spans at most 5 points (8–10 mV per %, references.md §2)', () => {
		// By hand on the IEEE TIM 2025 NMC nodes (0.4523, 3.6941) and (0.8392, 4.0664):
		// 50 % rests at 3.6941 + 0.3723 × 0.0477 / 0.3869 = 3.740000 V; ±10 mV spans 0.02 × 0.3869 / 0.3723 = 0.020784.
		expect(restVoltageFromSoc('nmc', 0.5)).toBeCloseTo(3.74, 6);
		const r = soc('nmc', 3.74, 0.01);
		expect(r.socHigh - r.socLow).toBeLessThanOrEqual(0.05);
		expect(r.socHigh - r.socLow).toBeCloseTo(0.020784, 5);
	});

	it('LFP 3.275–3.304 V reads about 30–50 % (202 Ah LFP datasheet); flat, so within 10 points', () => {
		expect(soc('lfp', 3.275).soc).toBeCloseTo(0.3, 1);
		expect(Math.abs(soc('lfp', 3.304).soc - 0.5)).toBeLessThan(0.1);
	});

	it.each(ids)('%s clamps to the curve ends', (id) => {
		expect(soc(id, 0.5).soc).toBe(0);
		expect(soc(id, 9).soc).toBe(1);
		expect(restVoltageFromSoc(id, -1)).toBe(chemistries[id].restCurve[0][1]);
		expect(restVoltageFromSoc(id, 2)).toBe(chemistries[id].restCurve.at(-1)?.[1]);
	});

	it('reports a flat run of a workshop curve by its middle, with the whole run as range', () => {
		const own = { ...chemistries.lfp, id: 'flat', restCurve: [[0, 2.5], [0.2, 3.3], [0.8, 3.3], [1, 3.6]] as [number, number][] };
		const r = socFromRestVoltage(own, 3.3, 0);
		expect(r).toMatchObject({ ok: true, soc: 0.5, socLow: 0.2, socHigh: 0.8 });
	});

	it.each(ids)('%s: soc never falls as volts rise, the range holds the reading, and the round trip returns (fast-check)', (id) => {
		const curve = chemistries[id].restCurve;
		const lo = curve[0][1];
		const hi = curve[curve.length - 1][1];
		fc.assert(
			fc.property(fc.double({ min: lo, max: hi, noNaN: true }), fc.double({ min: lo, max: hi, noNaN: true }), (a, b) => {
				const [x, y] = a <= b ? [a, b] : [b, a];
				const rx = soc(id, x);
				expect(soc(id, y).soc).toBeGreaterThanOrEqual(rx.soc - 1e-12);
				expect(rx.socLow).toBeLessThanOrEqual(rx.soc + 1e-12);
				expect(rx.socHigh).toBeGreaterThanOrEqual(rx.soc - 1e-12);
				expect(restVoltageFromSoc(id, rx.soc)).toBeCloseTo(x, 9);
			}),
			{ numRuns: 60 }
		);
	});

	it.each([
		['unknown chemistry', 'lipo', 3.7],
		['NaN volts', 'nmc', Number.NaN],
		['negative volts', 'nmc', -1],
		['infinite volts', 'nmc', Infinity]
	] as const)('socFromRestVoltage refuses %s', (_, id, volts) => {
		expect(socFromRestVoltage(id as ChemistryId, volts)).toMatchObject({ ok: false });
	});

	it('refuses a negative tolerance, and restVoltageFromSoc refuses a soc that is not a number', () => {
		expect(socFromRestVoltage('nmc', 3.7, -0.01)).toMatchObject({ ok: false });
		expect(restVoltageFromSoc('nmc', Number.NaN)).toMatchObject({ ok: false });
	});
});
