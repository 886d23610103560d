import { ExponentialRegression } from 'ml-regression-exponential';
import { resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
import { chargeModel, checkSetVolts, cvAmpsAt, cvHoursFrom, runCharge } from './charge';
import { curveSoc } from './soc';
import { fail, isFiniteNumber, isPositive, MS_PER_HOUR, timeOf, type Result } from './types';

/** A reading within this of the set voltage counts as CV (lead and meter drop) [CP]. */
const CV_VOLTS_BAND = 0.03;
/** Below this share of the set current the supply has left its current limit: CV. */
const CV_AMPS_SHARE = 0.9;
/** Readings needed to fit a taper. */
const MIN_FIT_READINGS = 3;

export interface StepReading {
	at: Date;
	/** Volts per cell. */
	volts: number;
	amps: number;
}

export interface ReestimateInput {
	chemistry: ChemistryId | Chemistry;
	capacityAh: number;
	setVolts: number;
	/** The step's set (CC) current. */
	amps: number;
	terminationAmps?: number;
	readings: StepReading[];
	now: Date;
	/**
	 * The step's start: its state of charge then and when it began. In CC the charge is then
	 * counted (amp-hours in from the logged currents) instead of read from the terminal voltage,
	 * which on a flat curve (LFP's plateau) says almost nothing about the state of charge.
	 */
	counted?: { startSoc: number; startedAt: Date };
}

export type ChargePhase = 'pre' | 'cc' | 'cv' | 'done';

export interface Reestimate {
	phase: ChargePhase;
	remainingHours: number;
	socNow: number;
	/** The CV taper's time constant fitted to the logged currents (I = I₀·e^(−t/τ)), when there are enough. */
	fittedTauHours?: number;
	/** How socNow was found in CC: amp-hours counted since the step's start, or the terminal voltage. */
	socBasis?: 'counted' | 'volts';
}

/**
 * Phase and time left of a running step from its readings. In CV with ≥ 3 falling currents, fits
 * I(t) = B·e^(A·t) (ml-regression-exponential), τ = −1/A, and remaining = τ·ln(I(now) / Iterm);
 * otherwise the calibrated model from the latest reading, less the time since it.
 */
export function reestimate(input: ReestimateInput): Result<Reestimate> {
	if (!input || typeof input !== 'object') return fail('invalid-input', 'A re-estimate input object is needed.');
	const chem = resolveChemistry(input.chemistry);
	if ('ok' in chem) return chem;
	if (!isPositive(input.capacityAh)) return fail('invalid-capacity', 'Capacity must be positive.');
	if (!isPositive(input.amps)) return fail('invalid-amps', 'The step current must be positive.');
	const f = checkSetVolts(chem, input.setVolts);
	if (f) return f;
	if (input.terminationAmps !== undefined && !isPositive(input.terminationAmps)) {
		return fail('invalid-termination', 'Termination amps must be positive.');
	}
	const now = timeOf(input.now);
	if (!Number.isFinite(now)) return fail('invalid-now', 'The current time is needed.');
	const readings = (Array.isArray(input.readings) ? input.readings : [])
		.filter((r) => r && Number.isFinite(timeOf(r.at)) && isPositive(r.volts) && isFiniteNumber(r.amps) && r.amps >= 0)
		.sort((a, b) => timeOf(a.at) - timeOf(b.at));
	if (readings.length === 0) return fail('no-readings', 'At least one reading with volts and amps is needed.');
	const term = input.terminationAmps ?? chem.terminationC * input.capacityAh;
	const model = chargeModel(chem, input.capacityAh, input.amps, input.setVolts, term);
	const latest = readings[readings.length - 1];
	const sinceHours = Math.max(0, (now - timeOf(latest.at)) / MS_PER_HOUR);
	const isCv = (r: StepReading) => r.volts >= input.setVolts - CV_VOLTS_BAND || r.amps < CV_AMPS_SHARE * input.amps;

	if (latest.volts < chem.fullDischargeVolts) {
		const socNow = clamp(curveSoc(chem.restCurve, latest.volts), 0, model.endSoc);
		const left = runCharge(model, socNow, latest.volts).totalHours;
		return { ok: true, phase: 'pre', remainingHours: Math.max(0, left - sinceHours), socNow };
	}
	if (latest.amps <= term && isCv(latest)) {
		return { ok: true, phase: 'done', remainingHours: 0, socNow: model.endSoc };
	}
	if (!isCv(latest)) {
		// Terminal volts in CC run overVolts above rest (the model's own offset); read soc below it.
		const counted = countedSoc(input, readings, latest);
		const socNow = clamp(counted ?? curveSoc(chem.restCurve, latest.volts - model.overVolts), 0, model.socAtCv);
		const left = runCharge(model, socNow).totalHours;
		return { ok: true, phase: 'cc', remainingHours: Math.max(0, left - sinceHours), socNow, socBasis: counted === null ? 'volts' : 'counted' };
	}

	let first = readings.length - 1;
	while (first > 0 && isCv(readings[first - 1])) first--;
	const run = readings.slice(first).filter((r) => r.amps > 0);
	if (run.length >= MIN_FIT_READINGS) {
		const t0 = timeOf(run[0].at);
		const x = run.map((r) => (timeOf(r.at) - t0) / MS_PER_HOUR);
		const y = run.map((r) => r.amps);
		if (x[x.length - 1] > 0) {
			const fit = new ExponentialRegression(x, y);
			if (isFiniteNumber(fit.A) && isFiniteNumber(fit.B) && fit.A < 0 && fit.B > 0) {
				const tau = -1 / fit.A;
				const ampsNow = fit.B * Math.exp(fit.A * ((now - t0) / MS_PER_HOUR));
				const remainingHours = ampsNow > term ? tau * Math.log(ampsNow / term) : 0;
				const socNow = clamp(model.endSoc - (tau * Math.max(0, ampsNow - term)) / input.capacityAh, 0, model.endSoc);
				return { ok: true, phase: 'cv', remainingHours, socNow, fittedTauHours: tau };
			}
		}
	}
	const ampsNow = Math.min(latest.amps, input.amps);
	const span = input.amps - term;
	const share = span > 0 ? clamp((ampsNow - term) / span, 0, 1) : 0;
	const socNow = model.endSoc - share * (model.endSoc - model.socAtCv);
	const left = cvHoursFrom(model, Math.max(ampsNow, cvAmpsAt(model, model.endSoc)));
	return { ok: true, phase: 'cv', remainingHours: Math.max(0, left - sinceHours), socNow };
}

/**
 * State of charge at the latest reading by counting: the start state plus the amp-hours in since
 * the step began (trapezoids between logged currents; before the first reading its current is
 * taken as constant — CC), over the capacity. Null without a usable start.
 */
function countedSoc(input: ReestimateInput, readings: StepReading[], latest: StepReading): number | null {
	const c = input.counted;
	if (!c || !isFiniteNumber(c.startSoc) || c.startSoc < 0 || c.startSoc > 1) return null;
	const start = timeOf(c.startedAt);
	const end = timeOf(latest.at);
	if (!Number.isFinite(start) || end < start) return null;
	const inStep = readings.filter((r) => timeOf(r.at) >= start);
	if (inStep.length === 0) return null;
	let ah = (inStep[0].amps * (timeOf(inStep[0].at) - start)) / MS_PER_HOUR;
	for (let i = 1; i < inStep.length; i++) {
		const hours = (timeOf(inStep[i].at) - timeOf(inStep[i - 1].at)) / MS_PER_HOUR;
		ah += ((inStep[i].amps + inStep[i - 1].amps) / 2) * hours;
	}
	return c.startSoc + ah / input.capacityAh;
}

function clamp(x: number, lo: number, hi: number): number {
	return Math.max(lo, Math.min(hi, x));
}
