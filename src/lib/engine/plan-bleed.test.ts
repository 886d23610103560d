import fc from 'fast-check';
import { Solver } from 'odex';
import { describe, expect, it } from 'vitest';
import { planBleed, type BleedInput } from './plan-bleed';
import { at, firstBadNumber, publishedRestCurves, RunCounter, stepsStartingUnattended, tableSoc, tableVolts } from './test-support';

function plan(input: BleedInput) {
	const r = planBleed(input);
	if (!r.ok) throw new Error(`${r.reason}: ${r.detail}`);
	return r;
}

describe('planBleed', () => {
	it('t = ΔQ / I: 15 Ah at 300 mA ≈ 50 h (Electronics World, Nov 2025, p. 28)', () => {
		const groups = [
			{ id: 'high', capacityAh: 100, startSoc: 0.65 },
			{ id: 'low', capacityAh: 100, startSoc: 0.5 }
		];
		const r = plan({ chemistry: 'lfp', groups, target: 'lowest', load: { amps: 0.3 }, start: at(0) });
		expect(r.steps).toHaveLength(1);
		expect(r.steps[0]).toMatchObject({ groupId: 'high', amps: 0.3 });
		expect(r.steps[0].ahOut).toBeCloseTo(15, 9);
		expect(r.steps[0].hours).toBeCloseTo(50, 9);
	});

	it('30–40 Ω across an LFP group near 3.3 V bleeds about 100 mA (batterydesign.net "Passive balancing": 100–300 mA, 30–40 Ω)', () => {
		const r = plan({ chemistry: 'lfp', groups: [{ id: 'g', capacityAh: 280, startVolts: 3.34 }], target: { volts: 3.3 }, load: { ohms: 33 }, start: at(0) });
		expect(r.steps[0].amps).toBeGreaterThan(0.09);
		expect(r.steps[0].amps).toBeLessThan(0.11);
		expect(r.steps[0].amps).toBeCloseTo(3.34 / 33, 9); // Ohm's law at the start: 0.101212 A
	});

	it('through a resistor the current falls with the voltage: hours agree with odex integrating dsoc/dt = −V(soc) / (R·C)', () => {
		const capacityAh = 3;
		const ohms = 10;
		const r = plan({ chemistry: 'nmc', groups: [{ id: 'g', capacityAh, startVolts: 4.1 }], target: { volts: 3.7 }, load: { ohms }, start: at(0) });
		// The rest curve is the published IEEE TIM 2025 NMC table, interpolated in the test (references.md §2):
		// 4.1 V at 0.8392 + 0.1156 × 0.0336 / 0.0457 = 0.924193, 3.7 V at 0.4523 + 0.3869 × 0.0059 / 0.3723 = 0.458431.
		const from = tableSoc(publishedRestCurves.nmc, 4.1);
		const to = tableSoc(publishedRestCurves.nmc, 3.7);
		expect(from).toBeCloseTo(0.924193, 5);
		expect(to).toBeCloseTo(0.458431, 5);
		const solver = new Solver(1);
		solver.denseOutput = true;
		solver.absoluteTolerance = solver.relativeTolerance = 1e-10;
		let hours = Number.NaN;
		solver.solve((_t: number, [s]: number[]) => [-tableVolts(publishedRestCurves.nmc, s) / (ohms * capacityAh)], 0, [from], 200, solver.grid(0.001, (t: number, [s]: number[]) => {
			if (Number.isNaN(hours) && s <= to) hours = t;
		}));
		// Sanity by hand: 3 Ah × (0.924193 − 0.458431) = 1.397 Ah out at 0.37–0.41 A takes 3.4–3.8 h.
		expect(hours).toBeGreaterThan(1.397 / 0.41);
		expect(hours).toBeLessThan(1.397 / 0.37);
		expect(r.steps[0].hours).toBeCloseTo(hours, 2);
		expect(r.steps[0].amps).toBeCloseTo(4.1 / ohms, 9);
		expect(r.steps[0].averageAmps).toBeLessThan(r.steps[0].amps);
	});

	it('warns that a load does not stop by itself when the bleed ends with nobody there', () => {
		const r = plan({ chemistry: 'nmc', groups: [{ id: 'g', capacityAh: 3, startVolts: 4.1 }, { id: 'h', capacityAh: 3, startVolts: 3.7 }], target: 'lowest', load: { amps: 0.5 }, start: at(0), handsOn: [{ start: at(0), end: at(0.5) }, { start: at(12), end: at(20) }] });
		expect(r.steps[0].unattendedHoldHours).toBeGreaterThan(0);
		expect(r.warnings).toContainEqual(expect.objectContaining({ code: 'bleed-unattended-end', groupId: 'g' }));
		expect(firstBadNumber(r)).toBeNull();
	});

	it.each([
		['a target below full discharge', { target: { volts: 2.8 } }, 'target-too-low'],
		['a load of zero ohms', { load: { ohms: 0 } }, 'invalid-load'],
		['a load with neither ohms nor amps', { load: {} }, 'invalid-load'],
		['a target that is neither volts nor lowest', { target: 'highest' }, 'invalid-target']
	])('refuses %s', (_, patch, reason) => {
		const input = { chemistry: 'nmc', groups: [{ id: 'g', capacityAh: 3, startVolts: 4.0 }], target: { volts: 3.7 }, load: { amps: 0.1 }, start: at(0), ...patch };
		expect(planBleed(input as BleedInput)).toMatchObject({ ok: false, reason });
	});

	it('properties (fast-check): every bleed starts inside a hands-on window; no NaN or negative number', () => {
		const runs = new RunCounter();
		fc.assert(
			fc.property(
				fc.array(fc.record({ capacityAh: fc.double({ min: 1, max: 300, noNaN: true }), startSoc: fc.double({ min: 0.05, max: 1, noNaN: true }) }), { minLength: 1, maxLength: 12 }), // above NMC's 3.0 V full discharge
				fc.oneof(fc.record({ ohms: fc.double({ min: 1, max: 100, noNaN: true }) }), fc.record({ amps: fc.double({ min: 0.01, max: 5, noNaN: true }) })),
				fc.double({ min: 1, max: 20, noNaN: true }),
				(gs, load, windowStart) => {
					const handsOn = Array.from({ length: 400 }, (_, day) => ({ start: at(day * 24 + windowStart), end: at(day * 24 + windowStart + 3) }));
					const groups = gs.map((g, i) => ({ id: `g${i}`, ...g }));
					const r = planBleed({ chemistry: 'nmc', groups, target: 'lowest', load, start: at(0), handsOn });
					if (!r.ok) {
						expect(r.reason).toBe('hands-on-too-short');
						runs.skipped++;
						return;
					}
					runs.ran++;
					expect(firstBadNumber(r)).toBeNull();
					expect(stepsStartingUnattended(r.steps, handsOn)).toEqual([]);
				}
			),
			{ numRuns: 40 }
		);
		// A refusal proves nothing about the steps: most generated cases must have produced a plan.
		expect(runs.enough(0.75)).toBe(true);
	});
});
