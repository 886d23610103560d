import fc from 'fast-check';
import { Solver } from 'odex';
import { describe, expect, it } from 'vitest';
import { chargeAmps, estimateCharge, type ChargeInput } from './charge';
import { chemistries, type ChemistryId } from './chemistry';
import { firstBadNumber, publishedRestCurves, RunCounter, tableSoc, tableVolts } from './test-support';

const ids = Object.keys(chemistries) as ChemistryId[];

function estimate(input: ChargeInput) {
	const r = estimateCharge(input);
	if (!r.ok) throw new Error(r.reason);
	return r;
}

/** First time (h) at which `f(t)` crosses `level` downward, from an odex dense-output grid. */
function crossing(
	rhs: (t: number, y: number[]) => number[],
	y0: number[],
	tEnd: number,
	stop: (y: number[]) => boolean,
	step = 0.0005
): { t: number; y: number[] } {
	const solver = new Solver(y0.length);
	solver.denseOutput = true;
	solver.absoluteTolerance = solver.relativeTolerance = 1e-10;
	let found: { t: number; y: number[] } | null = null;
	solver.solve(rhs, 0, y0, tEnd, solver.grid(step, (t: number, y: number[]) => {
		if (!found && stop(y)) found = { t, y: [...y] };
		return found ? false : undefined;
	}));
	if (!found) throw new Error('no crossing before tEnd');
	return found;
}

describe('chargeAmps', () => {
	it.each([
		// [case, input, amps, limitedBy] — arithmetic written out by hand.
		['channel amps', { channel: { maxAmps: 10, maxVolts: 30 }, groupMaxChargeAmps: 20, setVolts: 4.2 }, 10, 'channel-amps'],
		['channel watts: 30 W / 4.2 V', { channel: { maxAmps: 10, maxVolts: 30, maxWatts: 30 }, groupMaxChargeAmps: 20, setVolts: 4.2 }, 30 / 4.2, 'channel-watts'],
		['watts over 4 in series: 100 W / 16.8 V', { channel: { maxAmps: 10, maxVolts: 20, maxWatts: 100 }, setVolts: 4.2, seriesOnChannel: 4 }, 100 / 16.8, 'channel-watts'],
		['group rating', { channel: { maxAmps: 10, maxVolts: 30 }, groupMaxChargeAmps: 5, setVolts: 4.2 }, 5, 'group-rating'],
		['requested', { channel: { maxAmps: 10, maxVolts: 30 }, groupMaxChargeAmps: 5, setVolts: 4.2, requestedAmps: 2 }, 2, 'requested'],
		// 3 × 4.2 V is 12.600000000000001 in floating point; a 12.6 V channel must still reach it (issue 3).
		['3S at 4.2 V on a 12.6 V channel', { channel: { maxAmps: 6, maxVolts: 12.6 }, setVolts: 4.2, seriesOnChannel: 3 }, 6, 'channel-amps']
	] as const)('%s', (_, input, amps, limitedBy) => {
		const r = chargeAmps(input);
		expect(r).toMatchObject({ ok: true, limitedBy });
		expect(r.ok && r.amps).toBeCloseTo(amps, 12);
	});

	it.each([
		['set voltage beyond the channel', { channel: { maxAmps: 6, maxVolts: 12.6 }, setVolts: 4.25, seriesOnChannel: 3 }, 'channel-volts'],
		['no channel', { setVolts: 4.2 }, 'invalid-input'],
		['zero amps channel', { channel: { maxAmps: 0, maxVolts: 5 }, setVolts: 4.2 }, 'invalid-channel'],
		['NaN set volts', { channel: { maxAmps: 1, maxVolts: 5 }, setVolts: Number.NaN }, 'invalid-set-volts'],
		['fractional series', { channel: { maxAmps: 1, maxVolts: 50 }, setVolts: 4.2, seriesOnChannel: 2.5 }, 'invalid-series'],
		['negative request', { channel: { maxAmps: 1, maxVolts: 5 }, setVolts: 4.2, requestedAmps: -1 }, 'invalid-requested-amps']
	])('refuses %s', (_, input, reason) => {
		expect(chargeAmps(input as never)).toMatchObject({ ok: false, reason });
	});
});

describe('estimateCharge against the published envelope (references.md §3)', () => {
	// In-sample: calibration.ts fitted k to exactly these four points, so passing them shows the fit
	// was done, not that the model predicts anything. Out-of-sample evidence is further below.
	it.each([
		// [chemistry, C-rate, cut-off C, published hours, source]
		['nmc', 0.2, 0.01, 6, 'datasheet envelope: 0.2C to 4.2 V, 0.01C cut-off ≈ 6 h'],
		['nmc', 0.5, 0.01, 3, 'datasheet envelope: 0.5C to 4.2 V, 0.01C ≈ 3 h'],
		['nmc', 1, 0.05, 2.5, 'BU-409: 1C full charge of Li-ion ≈ 2–3 h'],
		['lfp', 1, 0.05, 2.0, 'LFP datasheet: 1C to 3.65 V, 0.05C ≈ 2.0 h']
	] as const)('calibration point (in-sample): %s at %fC to %fC within ±25 per cent of %f h (%s)', (id, c, cutoff, hours, _source) => {
		const chem = chemistries[id];
		const r = estimate({ chemistry: id, capacityAh: 1, startVolts: chem.fullDischargeVolts, amps: c, setVolts: chem.maxChargeVolts, terminationAmps: cutoff });
		expect(r.totalHours).toBeGreaterThanOrEqual(hours * 0.75);
		expect(r.totalHours).toBeLessThanOrEqual(hours * 1.25);
	});

	// NMC is in-sample here (its 1C point is in the fit); NCA/LCO/LMO run k on another rest curve
	// (Zephyr's) and start from 3.0 V at 7.7 % instead of 2.4 %: only partly out-of-sample.
	it.each(['nmc', 'nca', 'lco', 'lmo'] as const)('%s at 1C from near empty: 2–3 h in all (BU-409)', (id) => {
		const r = estimate({ chemistry: id, capacityAh: 2.5, startVolts: 3.0, amps: 2.5, setVolts: 4.2 });
		expect(r.totalHours).toBeGreaterThanOrEqual(2 * 0.75);
		expect(r.totalHours).toBeLessThanOrEqual(3 * 1.25);
	});

	it.each(ids)('%s at 1C: the CC stage ends between 65 and 85 per cent (BU-409 ≈ 70; TI seminar 70–80)', (id) => {
		const chem = chemistries[id];
		const r = estimate({ chemistry: id, capacityAh: 3, startSoc: 0.05, amps: 3, setVolts: chem.maxChargeVolts });
		expect(r.socAtCv).toBeGreaterThanOrEqual(0.65);
		expect(r.socAtCv).toBeLessThanOrEqual(0.85);
	});

	it.each([
		// BU-808 Table 4: 4.10 V gives 85–90 %, 4.00 V 70–75 %; issue 3 asks 0.82–0.92 at 4.10 V.
		['nmc', 4.1, 0.82, 0.92],
		['nca', 4.1, 0.82, 0.92],
		['nmc', 4.0, 0.7, 0.75],
		['lco', 4.0, 0.7, 0.75],
		['nmc', 4.2, 1, 1]
	] as const)('%s charged to %f V ends between %f and %f (BU-808)', (id, volts, lo, hi) => {
		const r = estimate({ chemistry: id, capacityAh: 3, startSoc: 0.1, amps: 1.5, setVolts: volts });
		expect(r.endSoc).toBeGreaterThanOrEqual(lo);
		expect(r.endSoc).toBeLessThanOrEqual(hi);
	});

	it('a resistance-only model (odex) under-predicts the 1C charge; the calibrated model lands in BU-409\'s 2–3 h', () => {
		// Resistance-only cell: terminal = rest(soc) + I·R, R chosen so CV starts at 75 % (BU-409 ≈ 70 %).
		// The rest curve is the published IEEE TIM 2025 NMC table, interpolated here (not the engine's code).
		const ocv = (s: number) => tableVolts(publishedRestCurves.nmc, s);
		const R = 4.2 - ocv(0.75); // ohms, for a 1 Ah cell at 1 A
		const startSoc = tableSoc(publishedRestCurves.nmc, 3.0); // 0.0237 (worked out in the pre-charge test)
		const ccHours = 0.75 - startSoc;
		const cv = crossing((_, [s]) => [(4.2 - ocv(s)) / R], [0.75], 10, ([s]) => (4.2 - ocv(s)) / R <= 0.05);
		const resistanceOnly = ccHours + cv.t;
		expect(resistanceOnly).toBeLessThan(2); // references.md §3 [D]: ≈ 1.5 h against 2–3 h
		const model = estimate({ chemistry: 'nmc', capacityAh: 1, startVolts: 3.0, amps: 1, setVolts: 4.2, terminationAmps: 0.05 });
		expect(model.totalHours).toBeGreaterThan(resistanceOnly);
		expect(model.totalHours).toBeGreaterThanOrEqual(2 * 0.75);
		expect(model.totalHours).toBeLessThanOrEqual(3 * 1.25);
	});

	it('with k = 1 the CV stage is an exponential taper from I to Iterm delivering the CV charge (checked by odex)', () => {
		const chem = { ...chemistries.nmc, id: 'k1', cvTaperFactor: 1 };
		const I = 2;
		const Iterm = 0.1;
		const r = estimate({ chemistry: chem, capacityAh: 2, startSoc: 0.1, amps: I, setVolts: 4.2, terminationAmps: Iterm });
		// By hand: 2 A into 2 Ah is 1C, so CV starts at 1 − 0.25 × 1 = 0.75 (BU-409/TI 25 % share) and
		// ends at 1 (set = 4.20 V): the CV charge is 0.25 × 2 Ah = 0.5 Ah.
		expect(r.socAtCv).toBeCloseTo(0.75, 12);
		expect(r.endSoc).toBe(1);
		const qcv = 0.5;
		const tau = qcv / (I - Iterm); // 0.5 / 1.9 = 0.26316 h: an exponential from I to Iterm delivering 0.5 Ah
		const end = crossing((_, [i]) => [-i / tau, i], [I, 0], 20, ([i]) => i <= Iterm, 0.0002);
		expect(end.t).toBeCloseTo(0.78835, 3); // τ·ln(2 / 0.1) = 0.26316 × 2.99573 = 0.78835 h
		expect(r.cvHours).toBeCloseTo(end.t, 3);
		expect(end.y[1]).toBeCloseTo(qcv, 3);
	});

	it('Wh in from empty to full averages between nominal (BU-216) and the charge voltage per cell', () => {
		for (const id of ids) {
			const c = chemistries[id];
			const r = estimate({ chemistry: id, capacityAh: 10, startVolts: c.fullDischargeVolts, amps: 5, setVolts: c.maxChargeVolts });
			expect(r.whIn / r.ahIn).toBeGreaterThan(c.nominalVolts - 0.05);
			expect(r.whIn / r.ahIn).toBeLessThan(c.maxChargeVolts);
		}
	});

	it('pre-charges at 0.1C below the full-discharge voltage (hand-worked on the IEEE TIM 2025 NMC table)', () => {
		const r = estimate({ chemistry: 'nmc', capacityAh: 10, startVolts: 2.7, amps: 5, setVolts: 4.2 });
		// Published nodes (references.md §2): (0, 2.5000) (0.0050, 2.8080) (0.0352, 3.1179).
		// 2.7 V: 0.005 × (2.7 − 2.5) / (2.808 − 2.5) = 0.005 × 0.2 / 0.308 = 0.0032468
		// 3.0 V (NMC full discharge, BU-216): 0.005 + 0.0302 × (3.0 − 2.808) / (3.1179 − 2.808)
		//       = 0.005 + 0.0302 × 0.192 / 0.3099 = 0.005 + 0.0187105 = 0.0237105
		// Pre-charge at min(5 A, 0.1C × 10 Ah = 1 A) = 1 A [CP; TI single-cell designs]:
		// (0.0237105 − 0.0032468) × 10 Ah / 1 A = 0.20464 h (about 12 minutes).
		expect(r.startSoc).toBeCloseTo(0.0032468, 6);
		expect(r.preHours).toBeCloseTo(0.20464, 4);
		// 3.2 V rests above 3.0 V: no pre-charge.
		expect(estimate({ chemistry: 'nmc', capacityAh: 10, startVolts: 3.2, amps: 5, setVolts: 4.2 }).preHours).toBe(0);
	});

	it('a measured high resistance brings CV earlier (longer CV, shorter CC); a low one changes nothing', () => {
		const base = { chemistry: 'nmc' as const, capacityAh: 3, startSoc: 0.1, amps: 3, setVolts: 4.2 };
		const plain = estimate(base);
		expect(estimate({ ...base, resistanceOhms: 0.01 })).toEqual(plain);
		const high = estimate({ ...base, resistanceOhms: 0.15 });
		// By hand: 3 A × 0.15 Ω = 0.45 V hides the curve above 4.20 − 0.45 = 3.75 V. On the IEEE TIM 2025
		// NMC table, 3.75 V lies between (0.4523, 3.6941) and (0.8392, 4.0664):
		// 0.4523 + 0.3869 × (3.75 − 3.6941) / 0.3723 = 0.4523 + 0.3869 × 0.15015 = 0.51039.
		// CV starts at min(0.75 default at 1C, 1 − (1 − 0.51039)) = 0.51039, not 0.75.
		expect(plain.socAtCv).toBeCloseTo(0.75, 12);
		expect(high.socAtCv).toBeCloseTo(0.51039, 5);
		expect(high.ccHours).toBeLessThan(plain.ccHours);
		expect(high.cvHours).toBeGreaterThan(plain.cvHours);
	});

	it('startSoc wins over startVolts; a group already at its end state needs nothing', () => {
		const both = estimate({ chemistry: 'nmc', capacityAh: 3, startSoc: 0.5, startVolts: 3.0, amps: 1, setVolts: 4.2 });
		const socOnly = estimate({ chemistry: 'nmc', capacityAh: 3, startSoc: 0.5, amps: 1, setVolts: 4.2 });
		expect(both).toEqual(socOnly);
		const full = estimate({ chemistry: 'nmc', capacityAh: 3, startSoc: 1, amps: 1, setVolts: 4.1 });
		expect(full).toMatchObject({ totalHours: 0, ahIn: 0, endSoc: 1 });
	});
});

describe('estimateCharge: hand-worked cases (arithmetic written out)', () => {
	// Model constants the arithmetic uses, each from outside the code: 25 % of the charge in CV at 1C
	// (BU-409 ≈ 70 %, TI seminar 70–80 % in CC), termination 0.05C (BU-808), k = 1.75 for the 4.2 V
	// family and 1.59 for LFP (the least-squares fit worked out by hand in calibration.test.ts).
	it('NMC 16 Ah group from 30 % at 10 A to 4.20 V', () => {
		const r = estimate({ chemistry: 'nmc', capacityAh: 16, startSoc: 0.3, amps: 10, setVolts: 4.2 });
		// C = 10 / 16 = 0.625; CC ends at 1 − 0.25 × 0.625 = 0.84375.
		// CC: (0.84375 − 0.30) × 16 Ah / 10 A = 0.87 h.
		// CV: Iterm = 0.05 × 16 = 0.8 A; Qcv = (1 − 0.84375) × 16 = 2.5 Ah;
		//     1.75 × 2.5 × ln(10 / 0.8) / (10 − 0.8) = 4.375 × 2.52573 / 9.2 = 1.20109 h.
		// Ah in: (1 − 0.30) × 16 = 11.2 Ah.
		expect(r.socAtCv).toBeCloseTo(0.84375, 12);
		expect(r.preHours).toBe(0);
		expect(r.ccHours).toBeCloseTo(0.87, 9);
		expect(r.cvHours).toBeCloseTo(1.20109, 4);
		expect(r.totalHours).toBeCloseTo(2.07109, 4);
		expect(r.ahIn).toBeCloseTo(11.2, 9);
		expect(r.terminationAmps).toBeCloseTo(0.8, 12);
	});

	it('LFP 100 Ah group from 20 % at 50 A to 3.65 V', () => {
		const r = estimate({ chemistry: 'lfp', capacityAh: 100, startSoc: 0.2, amps: 50, setVolts: 3.65 });
		// C = 0.5; CC ends at 1 − 0.25 × 0.5 = 0.875; CC: 0.675 × 100 / 50 = 1.35 h.
		// CV: Iterm 5 A; Qcv 12.5 Ah; 1.59 × 12.5 × ln(50 / 5) / 45 = 19.875 × 2.302585 / 45 = 1.01698 h.
		expect(r.ccHours).toBeCloseTo(1.35, 9);
		expect(r.cvHours).toBeCloseTo(1.01698, 4);
		expect(r.totalHours).toBeCloseTo(2.36698, 4);
	});

	it('NMC 3 Ah cell from 10 % at 1.5 A to 4.10 V (BU-808: each 70 mV less leaves 10 % less)', () => {
		const r = estimate({ chemistry: 'nmc', capacityAh: 3, startSoc: 0.1, amps: 1.5, setVolts: 4.1 });
		// End: 1 − 0.1 × 0.10 / 0.07 = 0.857143; CC ends at 0.857143 − 0.25 × 0.5 = 0.732143.
		// CC: (0.732143 − 0.1) × 3 / 1.5 = 1.264286 h. CV: Iterm 0.15 A, Qcv 0.125 × 3 = 0.375 Ah;
		// 1.75 × 0.375 × ln(1.5 / 0.15) / 1.35 = 0.65625 × 2.302585 / 1.35 = 1.119312 h.
		// Ah in: (0.857143 − 0.1) × 3 = 2.271429 Ah.
		expect(r.endSoc).toBeCloseTo(0.857143, 6);
		expect(r.ccHours).toBeCloseTo(1.264286, 6);
		expect(r.cvHours).toBeCloseTo(1.119312, 6);
		expect(r.ahIn).toBeCloseTo(2.271429, 6);
	});

	it('LFP set to 3.50 V ends where the published LFP table reaches 3.50 V', () => {
		const r = estimate({ chemistry: 'lfp', capacityAh: 10, startSoc: 0.5, amps: 5, setVolts: 3.5 });
		// IEEE TIM 2025 LFP nodes (0.995, 3.418) and (1, 3.5981):
		// 0.995 + 0.005 × (3.5 − 3.418) / 0.1801 = 0.995 + 0.0022765 = 0.9972765.
		expect(r.endSoc).toBeCloseTo(0.9972765, 6);
	});

	it('a group that starts past the CC→CV point starts in CV at the taper\'s current there', () => {
		const r = estimate({ chemistry: 'nmc', capacityAh: 16, startSoc: 0.95, amps: 10, setVolts: 4.2 });
		// CV starts at 0.84375 (as above); at 0.95 the linear taper is at
		// 0.8 + (10 − 0.8) × (1 − 0.95) / (1 − 0.84375) = 0.8 + 9.2 × 0.32 = 3.744 A.
		// CV left: 1.75 × 2.5 / 9.2 × ln(3.744 / 0.8) = 0.475543 × 1.543298 = 0.733905 h.
		expect(r.ccHours).toBe(0);
		expect(r.cvHours).toBeCloseTo(0.733905, 6);
		expect(r.ahIn).toBeCloseTo(0.8, 9); // (1 − 0.95) × 16
	});
});

describe('estimateCharge: out-of-sample evidence (checks the calibration did not use)', () => {
	const liIonAtSevenTenthsC = ['nmc', 'lco', 'lmo'] as const;
	it.each(liIonAtSevenTenthsC)('%s at 0.7C from full discharge to 0.05C: within ±25 per cent of BU-216\'s "0.7–1C (≈3 h)"', (id) => {
		// 0.7C is not a fitted C-rate, and BU-216 is not one of the fitted sources. The model gives
		// 2.39 h (NMC) and 2.31 h (LCO, LMO), 20–23 % under 3 h. At 1C it gives 2.05–2.11 h: inside
		// BU-409's 2–3 h but 30 % under BU-216's ≈3 h — the two sources differ, see docs/engine.md.
		const chem = chemistries[id];
		const r = estimate({ chemistry: id, capacityAh: 1, startVolts: chem.fullDischargeVolts, amps: 0.7, setVolts: chem.maxChargeVolts, terminationAmps: 0.05 });
		expect(r.totalHours).toBeGreaterThanOrEqual(3 * 0.75);
		expect(r.totalHours).toBeLessThanOrEqual(3 * 1.25);
	});

	it.each(ids)('%s: charge time is not proportional to current (BU-409): twice the current takes more than half the time', (id) => {
		const chem = chemistries[id];
		for (const [lo, hi] of [[0.3, 0.6], [0.5, 1], [1, 2]]) {
			const slow = estimate({ chemistry: id, capacityAh: 1, startVolts: chem.fullDischargeVolts, amps: lo, setVolts: chem.maxChargeVolts });
			const fast = estimate({ chemistry: id, capacityAh: 1, startVolts: chem.fullDischargeVolts, amps: hi, setVolts: chem.maxChargeVolts });
			expect(fast.totalHours).toBeLessThan(slow.totalHours);
			expect(fast.totalHours).toBeGreaterThan(slow.totalHours / 2);
		}
	});

	// A resistance-only cell (terminal = published rest curve + I·R, R fixed per cell so that CV
	// starts at 75 % at 1C) integrated by odex at C-rates and chemistries outside the fit. Published
	// saturation is slower than resistance alone (references.md §3 [D]), so the model must never be
	// faster than this ODE. A weak check (a lower bound only), but outside the fit: the LFP and NCA
	// tables and these C-rates never entered it. Measured: NMC 0.5C 2.11 h (ODE) vs 2.82 h (model),
	// 2C 0.99 vs 1.89 h; NCA 0.7C 1.36 vs 2.31 h; LFP 0.7C 1.43 vs 2.30 h.
	it.each([
		['nmc', publishedRestCurves.nmc, 4.2, 3.0],
		['nca', publishedRestCurves.liIon, 4.2, 3.0],
		['lfp', publishedRestCurves.lfp, 3.65, 2.5]
	] as const)('%s: never faster than a resistance-only cell (odex) at 0.3C, 0.5C, 0.7C and 2C', (id, table, setVolts, fromVolts) => {
		const ocv = (s: number) => tableVolts(table, s);
		const R = setVolts - ocv(0.75); // ohms for a 1 Ah cell at 1 A
		for (const c of [0.3, 0.5, 0.7, 2]) {
			const amps = (s: number) => Math.min(c, (setVolts - ocv(s)) / R);
			// The Zephyr and LFP tables top out below the set voltage (4.032 V, 3.598 V at 100 %), so the
			// ODE also stops when the cell is full.
			const end = crossing((_, [s]) => [amps(s)], [tableSoc(table, fromVolts)], 30, ([s]) => amps(s) <= 0.05 || s >= 1, 0.001);
			const model = estimate({ chemistry: id, capacityAh: 1, startVolts: fromVolts, amps: c, setVolts, terminationAmps: 0.05 });
			expect(model.totalHours).toBeGreaterThanOrEqual(end.t);
		}
	});

	it('physics bound (fast-check): the current never exceeds the set current, so hours ≥ Ah in / amps', () => {
		fc.assert(
			fc.property(fc.constantFrom(...ids), fc.double({ min: 0.5, max: 300, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0.05, max: 3, noNaN: true }), (id, cap, s0, c) => {
				const r = estimate({ chemistry: id, capacityAh: cap, startSoc: s0, amps: c * cap, setVolts: chemistries[id].maxChargeVolts });
				expect(r.totalHours).toBeGreaterThanOrEqual(r.ahIn / (c * cap) - 1e-9);
			}),
			{ numRuns: 120 }
		);
	});

	// Known miss, kept visible: common practice says stopping at C/10 leaves 95–98 % (references.md §3
	// [CP]); the model's end state depends on the set voltage only, so a C/10 cut-off still reports
	// 100 % (the cut-off only shortens the CV time). When the model learns this, this test starts to
	// fail and should become a plain check. A taper falling linearly to zero was tried and not kept:
	// it ends at 98.7 % here and, refitted, breaks the BU-216 checks above (docs/engine.md).
	it.fails('known miss: a C/10 cut-off leaves 95–98 % in (common practice), not 100 %', () => {
		const r = estimate({ chemistry: 'nmc', capacityAh: 1, startSoc: 0.1, amps: 1, setVolts: 4.2, terminationAmps: 0.1 });
		expect(r.endSoc).toBeLessThanOrEqual(0.98);
	});
});

describe('estimateCharge refuses what it cannot honour', () => {
	const ok: ChargeInput = { chemistry: 'nmc', capacityAh: 3, startSoc: 0.2, amps: 1, setVolts: 4.2 };
	it.each([
		['no start state', { startSoc: undefined }, 'missing-start'],
		['set voltage 10 mV above the maximum', { setVolts: 4.21 }, 'set-volts-above-maximum'],
		['LFP set above 3.65 V', { chemistry: 'lfp', setVolts: 3.7 }, 'set-volts-above-maximum'],
		['zero capacity', { capacityAh: 0 }, 'invalid-capacity'],
		['NaN amps', { amps: Number.NaN }, 'invalid-amps'],
		['start soc above 1', { startSoc: 1.2 }, 'invalid-start-soc'],
		['negative termination', { terminationAmps: -0.1 }, 'invalid-termination'],
		['negative resistance', { resistanceOhms: -1 }, 'invalid-resistance'],
		['unknown chemistry', { chemistry: 'lipo' }, 'unknown-chemistry'],
		['set below full discharge', { setVolts: 2.9 }, 'set-volts-too-low']
	])('%s', (_, patch, reason) => {
		expect(estimateCharge({ ...ok, ...patch } as ChargeInput)).toMatchObject({ ok: false, reason });
	});

	it('accepts a set voltage within 5 mV above the maximum (issue 3)', () => {
		expect(estimateCharge({ ...ok, setVolts: 4.204 })).toMatchObject({ ok: true });
	});
});

describe('estimateCharge properties (fast-check)', () => {
	const chemArb = fc.constantFrom(...ids);
	const runs = { numRuns: 120 };

	it('more current never makes CC longer', () => {
		fc.assert(
			fc.property(chemArb, fc.double({ min: 0.5, max: 300, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0.02, max: 3, noNaN: true }), fc.double({ min: 0.02, max: 3, noNaN: true }), fc.option(fc.double({ min: 0, max: 0.05, noNaN: true })), (id, cap, s0, c1, c2, ohmsPerAh) => {
				const [lo, hi] = c1 <= c2 ? [c1, c2] : [c2, c1];
				const set = chemistries[id].maxChargeVolts;
				const resistanceOhms = ohmsPerAh === null ? undefined : ohmsPerAh / cap;
				const a = estimate({ chemistry: id, capacityAh: cap, startSoc: s0, amps: lo * cap, setVolts: set, resistanceOhms });
				const b = estimate({ chemistry: id, capacityAh: cap, startSoc: s0, amps: hi * cap, setVolts: set, resistanceOhms });
				expect(b.ccHours).toBeLessThanOrEqual(a.ccHours + 1e-9);
			}),
			runs
		);
	});

	it('a higher start never makes a charge longer', () => {
		fc.assert(
			fc.property(chemArb, fc.double({ min: 0.5, max: 300, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0.05, max: 2, noNaN: true }), fc.double({ min: 0, max: 0.4, noNaN: true }), (id, cap, a, b, c, below) => {
				const [lo, hi] = a <= b ? [a, b] : [b, a];
				const chem = chemistries[id];
				const set = Math.max(chem.maxChargeVolts - below, chem.nominalVolts);
				const x = estimate({ chemistry: id, capacityAh: cap, startSoc: lo, amps: c * cap, setVolts: set });
				const y = estimate({ chemistry: id, capacityAh: cap, startSoc: hi, amps: c * cap, setVolts: set });
				expect(y.totalHours).toBeLessThanOrEqual(x.totalHours + 1e-9);
			}),
			runs
		);
	});

	it('no NaN or negative number for any valid input', () => {
		fc.assert(
			fc.property(chemArb, fc.double({ min: 0.01, max: 1000, noNaN: true }), fc.oneof(fc.record({ startSoc: fc.double({ min: 0, max: 1, noNaN: true }) }), fc.record({ startVolts: fc.double({ min: 0.5, max: 5, noNaN: true }) })), fc.double({ min: 0.001, max: 10, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.option(fc.double({ min: 0.0001, max: 5, noNaN: true })), (id, cap, start, c, setShare, termC) => {
				const chem = chemistries[id];
				const set = chem.fullDischargeVolts + 0.01 + setShare * (chem.maxChargeVolts - chem.fullDischargeVolts - 0.01);
				const r = estimateCharge({ chemistry: id, capacityAh: cap, ...start, amps: c * cap, setVolts: set, terminationAmps: termC === null ? undefined : termC * cap });
				expect(r.ok).toBe(true);
				expect(firstBadNumber(r)).toBeNull();
				if (r.ok) expect(r.totalHours).toBeCloseTo(r.preHours + r.ccHours + r.cvHours, 9);
			}),
			runs
		);
	});

	it('ok: false for invalid input', () => {
		const bad = fc.constantFrom(Number.NaN, -1, 0, Infinity, -Infinity);
		const runs = new RunCounter();
		fc.assert(
			fc.property(fc.constantFrom('capacityAh', 'amps', 'setVolts', 'startSoc'), bad, (field, value) => {
				const input = { chemistry: 'nmc', capacityAh: 3, startSoc: 0.2, amps: 1, setVolts: 4.2, [field]: value } as ChargeInput;
				if (field === 'startSoc' && value === 0) {
					runs.skipped++; // 0 is a valid start
					return;
				}
				expect(estimateCharge(input)).toMatchObject({ ok: false });
				runs.ran++;
			}),
			{ numRuns: 40 }
		);
		expect(runs.enough(0.8)).toBe(true); // 1 of 20 field/value pairs is skipped
	});
});
