import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { Solver } from 'odex';
import { describe, expect, it } from 'vitest';
import { estimateCharge } from './charge';
import { reestimate, type StepReading } from './reestimate';
import { at, prng } from './test-support';

const H = 3_600_000;

/** Readings of a CV taper I = I0·e^(−t/τ) starting at hour `t0`, every `every` hours, with relative noise. */
function taper(I0: number, tau: number, t0: number, count: number, every: number, noise = 0, seed = 1): StepReading[] {
	const r = prng(seed);
	return Array.from({ length: count }, (_, i) => ({
		at: at(t0 + i * every),
		volts: 4.2,
		amps: I0 * Math.exp(-(i * every) / tau) * (1 + noise * (2 * r() - 1))
	}));
}

describe('reestimate', () => {
	it('CV: fits the logged taper; τ agrees with an independent Levenberg–Marquardt fit and the generating τ', () => {
		const readings = taper(10, 0.8, 10, 6, 0.25);
		const r = reestimate({ chemistry: 'nmc', capacityAh: 16, setVolts: 4.2, amps: 10, readings, now: readings[5].at });
		expect(r).toMatchObject({ ok: true, phase: 'cv' });
		if (!r.ok) return;
		const x = readings.map((p) => (p.at.getTime() - readings[0].at.getTime()) / H);
		const lm = levenbergMarquardt({ x, y: readings.map((p) => p.amps) }, ([a, tau]) => (t: number) => a * Math.exp(-t / tau), {
			initialValues: [8, 1],
			damping: 0.1,
			maxIterations: 2000,
			errorTolerance: 1e-14,
			jacobianFunction: ([a, tau]) => (t: number) => [Math.exp(-t / tau), ((a * t) / (tau * tau)) * Math.exp(-t / tau)]
		});
		expect(r.fittedTauHours).toBeCloseTo(lm.parameterValues[1], 3);
		expect(r.fittedTauHours).toBeCloseTo(0.8, 6);
	});

	it('CV: remaining hours match odex integrating the fitted taper down to the termination current', () => {
		const readings = taper(10, 0.8, 10, 5, 0.25);
		const now = at(11.25);
		const r = reestimate({ chemistry: 'nmc', capacityAh: 16, setVolts: 4.2, amps: 10, terminationAmps: 0.8, readings, now });
		if (!r.ok) throw new Error(r.reason);
		// Integrate dI/dt = −I/τ from the current the taper gives at `now` until it reaches 0.8 A.
		const start = 10 * Math.exp(-1.25 / 0.8);
		const solver = new Solver(1);
		solver.denseOutput = true;
		let tEnd = Number.NaN;
		solver.solve((_t: number, [i]: number[]) => [-i / 0.8], 0, [start], 10, solver.grid(0.0005, (t: number, [i]: number[]) => {
			if (Number.isNaN(tEnd) && i <= 0.8) tEnd = t;
		}));
		expect(r.remainingHours).toBeCloseTo(tEnd, 2);
	});

	it('corrects itself: a slower logged taper than the model expects leaves more time, a faster one less', () => {
		const base = { chemistry: 'nmc' as const, capacityAh: 16, setVolts: 4.2, amps: 10 };
		const slow = reestimate({ ...base, readings: taper(5, 3, 10, 4, 0.25), now: at(10.75) });
		const fast = reestimate({ ...base, readings: taper(5, 0.3, 10, 4, 0.25), now: at(10.75) });
		const noFit = reestimate({ ...base, readings: [{ at: at(10.75), volts: 4.2, amps: 5 * Math.exp(-0.75 / 3) }], now: at(10.75) });
		if (!slow.ok || !fast.ok || !noFit.ok) throw new Error();
		expect(noFit.fittedTauHours).toBeUndefined();
		expect(slow.remainingHours).toBeGreaterThan(noFit.remainingHours);
		expect(fast.remainingHours).toBeLessThan(noFit.remainingHours);
	});

	it('tolerates noisy logged currents (±3 %)', () => {
		const readings = taper(8, 1.2, 0, 9, 0.25, 0.03, 42);
		const r = reestimate({ chemistry: 'nmc', capacityAh: 20, setVolts: 4.2, amps: 8, readings, now: readings[8].at });
		expect(r.ok && r.fittedTauHours).toBeGreaterThan(1.2 * 0.85);
		expect(r.ok && r.fittedTauHours).toBeLessThan(1.2 * 1.15);
	});

	it.each([
		// [case, latest reading, phase] for a 16 Ah NMC group at 10 A to 4.2 V (termination 0.05C = 0.8 A, BU-808)
		['CC: below the set voltage at the set current', { volts: 3.95, amps: 10 }, 'cc'],
		['CV: at the set voltage, current falling', { volts: 4.2, amps: 4 }, 'cv'],
		['done: current down to termination', { volts: 4.2, amps: 0.7 }, 'done'],
		['pre: below the full-discharge voltage (BU-216 3.0 V)', { volts: 2.8, amps: 1.6 }, 'pre']
	] as const)('%s', (_, last, phase) => {
		const r = reestimate({ chemistry: 'nmc', capacityAh: 16, setVolts: 4.2, amps: 10, readings: [{ at: at(3), ...last }], now: at(3) });
		expect(r).toMatchObject({ ok: true, phase });
		if (r.ok && phase === 'done') expect(r.remainingHours).toBe(0);
		if (r.ok && phase !== 'done') expect(r.remainingHours).toBeGreaterThan(0);
	});

	it('CC, worked by hand: 3.9 V at 10 A into a 16 Ah NMC group set to 4.20 V', () => {
		const r = reestimate({ chemistry: 'nmc', capacityAh: 16, setVolts: 4.2, amps: 10, readings: [{ at: at(3), volts: 3.9, amps: 10 }], now: at(3) });
		// CC→CV at 1 − 0.25 × 10/16 = 0.84375 (BU-409/TI). On the IEEE TIM 2025 NMC table that rests at
		// 4.0664 + 0.0457 × 0.00455 / 0.1156 = 4.068199 V, so during CC the terminal reads 4.2 − 4.068199
		// = 0.131801 V above rest. 3.9 V at 10 A then rests at 3.768199 V:
		// 0.4523 + 0.3869 × (3.768199 − 3.6941) / 0.3723 = 0.529305.
		// Left: CC (0.84375 − 0.529305) × 16 / 10 = 0.503113 h + CV 1.75 × 2.5 × ln 12.5 / 9.2 = 1.201094 h.
		expect(r).toMatchObject({ ok: true, phase: 'cc', socNow: expect.closeTo(0.529305, 5), remainingHours: expect.closeTo(1.704206, 5) });
	});

	it('CV with one reading (no fit), worked by hand: 4.20 V at 4 A', () => {
		const r = reestimate({ chemistry: 'nmc', capacityAh: 16, setVolts: 4.2, amps: 10, readings: [{ at: at(3), volts: 4.2, amps: 4 }], now: at(3) });
		// The taper runs from 10 A at 0.84375 to 0.8 A (0.05C, BU-808) at 1: 4 A is (4 − 0.8) / 9.2 = 0.347826
		// of the way up, so soc = 1 − 0.347826 × 0.15625 = 0.945652; left 1.75 × 2.5 / 9.2 × ln(4 / 0.8) = 0.765358 h.
		expect(r).toMatchObject({ ok: true, phase: 'cv', socNow: expect.closeTo(0.945652, 5), remainingHours: expect.closeTo(0.765358, 5) });
		expect(r.ok && r.fittedTauHours).toBeUndefined();
	});

	it('CC: time passed since the last reading comes off the remaining time', () => {
		const input = { chemistry: 'nmc' as const, capacityAh: 16, setVolts: 4.2, amps: 10, readings: [{ at: at(3), volts: 3.9, amps: 10 }] };
		const a = reestimate({ ...input, now: at(3) });
		const b = reestimate({ ...input, now: at(3.5) });
		if (!a.ok || !b.ok) throw new Error();
		expect(a.remainingHours - b.remainingHours).toBeCloseTo(0.5, 9);
	});

	it.each([
		['no readings', { readings: [] }, 'no-readings'],
		['readings with no numbers', { readings: [{ at: at(1), volts: Number.NaN, amps: 1 }] }, 'no-readings'],
		['no now', { now: undefined }, 'invalid-now'],
		['set above the maximum', { setVolts: 4.3 }, 'set-volts-above-maximum'],
		['zero capacity', { capacityAh: 0 }, 'invalid-capacity']
	])('refuses %s', (_, patch, reason) => {
		const input = { chemistry: 'nmc', capacityAh: 16, setVolts: 4.2, amps: 10, readings: [{ at: at(1), volts: 4.0, amps: 10 }], now: at(2), ...patch };
		expect(reestimate(input as never)).toMatchObject({ ok: false, reason });
	});

	it('CC with the step\'s start known: counts the amp-hours in rather than reading the flat LFP plateau', () => {
		// A 105 Ah LFP group from 30 % at 10:00 on a 5 A supply; logged 5.0 A at 11:00 and 4.8 A at 12:00.
		// Counted by hand: 5.0 A × 1 h before the first reading (CC) + (5.0 + 4.8) / 2 × 1 h = 9.9 Ah;
		// 0.30 + 9.9 / 105 = 0.394286.
		const readings: StepReading[] = [
			{ at: at(11), volts: 3.4, amps: 5 },
			{ at: at(12), volts: 3.41, amps: 4.8 }
		];
		const base = { chemistry: 'lfp' as const, capacityAh: 105, setVolts: 3.65, amps: 5, readings, now: at(12) };
		const counted = reestimate({ ...base, counted: { startSoc: 0.3, startedAt: at(10) } });
		if (!counted.ok) throw new Error(counted.reason);
		expect(counted).toMatchObject({ phase: 'cc', socBasis: 'counted' });
		expect(counted.socNow).toBeCloseTo(0.394286, 5);
		// What is left is the model's charge from that state (estimateCharge is checked against
		// published charge times in charge.test.ts).
		const fromThere = estimateCharge({ chemistry: 'lfp', capacityAh: 105, amps: 5, setVolts: 3.65, startSoc: 0.394286 });
		if (!fromThere.ok) throw new Error(fromThere.reason);
		expect(counted.remainingHours).toBeCloseTo(fromThere.totalHours, 3);
		// Without the start, the same readings fall back to the terminal voltage.
		expect(reestimate(base)).toMatchObject({ ok: true, socBasis: 'volts' });
		// A start state outside 0..1 is not counted.
		expect(reestimate({ ...base, counted: { startSoc: 1.3, startedAt: at(10) } })).toMatchObject({ socBasis: 'volts' });
	});
});
