import { describe, expect, it } from 'vitest';
import { chemistries, familyOf, resolveChemistry, type ChemistryId } from './chemistry';

describe('chemistry limits', () => {
	// BU-216 "Summary Table of Lithium-based Batteries" (references.md §1): nominal, full charge, full discharge, minimal V.
	it.each([
		['nmc', 3.6, 4.2, 3.0, 2.5],
		['nca', 3.6, 4.2, 3.0, 2.5],
		['lco', 3.6, 4.2, 3.0, 2.5],
		['lmo', 3.7, 4.2, 3.0, 2.5],
		['lfp', 3.2, 3.65, 2.5, 2.0],
		['lto', 2.4, 2.85, 1.8, 1.5]
	] as const)('%s: %f V nominal, %f V full, %f V discharged, %f V minimal (BU-216)', (id, nominal, full, discharged, minimal) => {
		const c = chemistries[id];
		expect(c.nominalVolts).toBe(nominal);
		expect(c.maxChargeVolts).toBe(full);
		expect(c.fullDischargeVolts).toBe(discharged);
		expect(c.minVolts).toBe(minimal);
	});

	it.each(Object.keys(chemistries) as ChemistryId[])('%s: charge 0–45 °C, discharge −20–60 °C (BU-410), termination 0.05C (BU-808), 25 per cent in CV at 1C (BU-409, TI)', (id) => {
		const c = chemistries[id];
		expect(c.chargeTempC).toEqual({ min: 0, max: 45 }); // BU-410
		expect(c.dischargeTempC).toEqual({ min: -20, max: 60 }); // BU-410
		expect(c.terminationC).toBe(0.05); // BU-808 lab protocol
		expect(c.cvShareAt1C).toBe(0.25); // BU-409: 70–80 % in CC at 1C
	});

	it.each([
		// BU-216 charge-rate column: 0.7–1C for LCO/LMO/NMC, 1C for NCA, LFP, LTO.
		['nmc', 0.7, 1],
		['lco', 0.7, 1],
		['lmo', 0.7, 1],
		['nca', 1, 1],
		['lfp', 1, 1],
		['lto', 1, 1]
	] as const)('%s default charge rate inside BU-216 range %f–%fC', (id, lo, hi) => {
		expect(chemistries[id].defaultChargeC).toBeGreaterThanOrEqual(lo);
		expect(chemistries[id].defaultChargeC).toBeLessThanOrEqual(hi);
	});

	it('storage voltage sits where references.md §1 puts 40 % SoC', () => {
		// LFP 30–50 % ↔ 3.275–3.304 V — 202 Ah LFP prismatic datasheet.
		expect(chemistries.lfp.storageVolts).toBeGreaterThanOrEqual(3.275);
		expect(chemistries.lfp.storageVolts).toBeLessThanOrEqual(3.304);
		// Modern NMC/NCA tables give 3.53–3.66 V at 40 % (references.md §1, BU-702 discussion).
		for (const id of ['nmc', 'nca'] as const) {
			expect(chemistries[id].storageVolts).toBeGreaterThanOrEqual(3.53);
			expect(chemistries[id].storageVolts).toBeLessThanOrEqual(3.66);
		}
	});

	it('marks the curves with no published table as approximate (references.md §2)', () => {
		expect(chemistries.lco.restCurveApproximate).toBe(true);
		expect(chemistries.lmo.restCurveApproximate).toBe(true);
		expect(chemistries.lto.restCurveApproximate).toBe(true);
		expect(chemistries.nmc.restCurveApproximate).toBe(false);
		expect(chemistries.lfp.restCurveApproximate).toBe(false);
		expect(chemistries.nca.restCurveApproximate).toBe(false);
	});

	it.each(Object.keys(chemistries) as ChemistryId[])('%s rest curve: soc ascending from 0 to 1, volts rising', (id) => {
		const curve = chemistries[id].restCurve;
		expect(curve[0][0]).toBe(0);
		expect(curve[curve.length - 1][0]).toBe(1);
		for (let i = 1; i < curve.length; i++) {
			expect(curve[i][0]).toBeGreaterThan(curve[i - 1][0]);
			expect(curve[i][1]).toBeGreaterThan(curve[i - 1][1]);
		}
	});

	it.each([
		['nmc', 'li-ion'],
		['nca', 'li-ion'],
		['lco', 'li-ion'],
		['lmo', 'li-ion'],
		['lfp', 'lfp'],
		['lto', 'lto']
	] as const)('%s belongs to the %s family', (id, family) => {
		expect(familyOf(chemistries[id])).toBe(family);
	});
});

describe('resolveChemistry', () => {
	it('accepts a workshop profile built from a datasheet', () => {
		const own = { ...chemistries.nmc, id: 'my-cell', name: 'My cell', maxChargeVolts: 4.35 };
		expect(resolveChemistry(own)).toBe(own);
	});

	it.each([
		['unknown id', 'lipo'],
		['null', null],
		['falling curve', { ...chemistries.nmc, restCurve: [[0, 3.0], [0.5, 2.9], [1, 4.2]] }],
		['soc above 1', { ...chemistries.nmc, restCurve: [[0, 3.0], [1.2, 4.2]] }],
		['one point', { ...chemistries.nmc, restCurve: [[0, 3.0]] }],
		['limits out of order', { ...chemistries.nmc, nominalVolts: 4.3 }],
		['NaN voltage', { ...chemistries.nmc, maxChargeVolts: Number.NaN }],
		['cvShare of 1', { ...chemistries.nmc, cvShareAt1C: 1 }]
	])('refuses %s', (_, input) => {
		const r = resolveChemistry(input);
		expect(r).toMatchObject({ ok: false });
	});
});
