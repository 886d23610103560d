import fc from 'fast-check';
import { Solver } from 'odex';
import { describe, expect, it } from 'vitest';
import { chargeAmps, estimateCharge, type ChargeInput } from './charge';
import { chemistries, type ChemistryId } from './chemistry';
import { restVoltageFromSoc, socFromRestVoltage } from './soc';
import { firstBadNumber } from './test-support';

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
	it.each([
		// [chemistry, C-rate, cut-off C, published hours, source]
		['nmc', 0.2, 0.01, 6, 'datasheet envelope: 0.2C to 4.2 V, 0.01C cut-off ≈ 6 h'],
		['nmc', 0.5, 0.01, 3, 'datasheet envelope: 0.5C to 4.2 V, 0.01C ≈ 3 h'],
		['nmc', 1, 0.05, 2.5, 'BU-409: 1C full charge of Li-ion ≈ 2–3 h'],
		['lfp', 1, 0.05, 2.0, 'LFP datasheet: 1C to 3.65 V, 0.05C ≈ 2.0 h']
	] as const)('%s at %fC to %fC: within ±25 %% of %f h (%s)', (id, c, cutoff, hours, _source) => {
		const chem = chemistries[id];
		const r = estimate({ chemistry: id, capacityAh: 1, startVolts: chem.fullDischargeVolts, amps: c, setVolts: chem.maxChargeVolts, terminationAmps: cutoff });
		expect(r.totalHours).toBeGreaterThanOrEqual(hours * 0.75);
		expect(r.totalHours).toBeLessThanOrEqual(hours * 1.25);
	});

	it.each(['nmc', 'nca', 'lco', 'lmo'] as const)('%s at 1C from near empty: 2–3 h in all (BU-409)', (id) => {
		const r = estimate({ chemistry: id, capacityAh: 2.5, startVolts: 3.0, amps: 2.5, setVolts: 4.2 });
		expect(r.totalHours).toBeGreaterThanOrEqual(2 * 0.75);
		expect(r.totalHours).toBeLessThanOrEqual(3 * 1.25);
	});

	it.each(ids)('%s at 1C: the CC stage ends between 65 %% and 85 %% (BU-409 ≈ 70 %%; TI seminar 70–80 %%)', (id) => {
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
		const ocv = (s: number) => restVoltageFromSoc('nmc', s) as number;
		const R = 4.2 - ocv(0.75); // ohms, for a 1 Ah cell at 1 A
		const start = socFromRestVoltage('nmc', 3.0);
		if (!start.ok) throw new Error(start.reason);
		const ccHours = 0.75 - start.soc;
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
		const qcv = (r.endSoc - r.socAtCv) * 2;
		const tau = qcv / (I - Iterm); // an exponential from I to Iterm delivering qcv has this time constant
		const end = crossing((_, [i]) => [-i / tau, i], [I, 0], 20, ([i]) => i <= Iterm, 0.0002);
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

	it('pre-charges at 0.1C below the full-discharge voltage', () => {
		const r = estimate({ chemistry: 'nmc', capacityAh: 10, startVolts: 2.7, amps: 5, setVolts: 4.2 });
		expect(r.preHours).toBeGreaterThan(0);
		// Pre-charge moves the soc from the 2.7 V point to the 3.0 V point at 1 A (0.1C of 10 Ah).
		const a = socFromRestVoltage('nmc', 2.7);
		const b = socFromRestVoltage('nmc', 3.0);
		if (!a.ok || !b.ok) throw new Error();
		expect(r.preHours).toBeCloseTo(((b.soc - a.soc) * 10) / 1, 9);
		expect(estimate({ chemistry: 'nmc', capacityAh: 10, startVolts: 3.2, amps: 5, setVolts: 4.2 }).preHours).toBe(0);
	});

	it('a measured high resistance brings CV earlier (longer CV, shorter CC); a low one changes nothing', () => {
		const base = { chemistry: 'nmc' as const, capacityAh: 3, startSoc: 0.1, amps: 3, setVolts: 4.2 };
		const plain = estimate(base);
		expect(estimate({ ...base, resistanceOhms: 0.01 })).toEqual(plain);
		const high = estimate({ ...base, resistanceOhms: 0.15 });
		expect(high.socAtCv).toBeLessThan(plain.socAtCv);
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
		fc.assert(
			fc.property(fc.constantFrom('capacityAh', 'amps', 'setVolts', 'startSoc'), bad, (field, value) => {
				const input = { chemistry: 'nmc', capacityAh: 3, startSoc: 0.2, amps: 1, setVolts: 4.2, [field]: value } as ChargeInput;
				if (field === 'startSoc' && value === 0) return; // 0 is a valid start
				expect(estimateCharge(input)).toMatchObject({ ok: false });
			}),
			{ numRuns: 40 }
		);
	});
});
