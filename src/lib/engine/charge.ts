import { cvTaperFactorOf, familyOf, resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
import { curveSoc, curveVolts, integrateVolts } from './soc';
import { fail, isFiniteNumber, isNonNegative, isPositive, type Failure, type Result } from './types';

/** Tolerance for comparing voltages: 3 × 4.2 V is 12.600000000000001 in floating point. */
const VOLTS_EPSILON = 1e-9;
/** A set voltage may exceed the chemistry's maximum by this much before it is refused (issue 3). */
export const SET_VOLTS_TOLERANCE = 0.005;
/** Pre-charge rate below the full-discharge voltage, in C [CP; TI single-cell charger designs]. */
export const PRE_CHARGE_C = 0.1;
/** BU-808 Table 4: each 70 mV below 4.20 V leaves about 10 % less (4.10 V ≈ 85–90 %, 4.00 V ≈ 70–75 %). */
const LI_ION_VOLTS_PER_STEP = 0.07;
const LI_ION_SOC_PER_STEP = 0.1;

export interface Channel {
	id?: string;
	maxAmps: number;
	maxVolts: number;
	maxWatts?: number;
}

export interface ChargeAmpsInput {
	channel: Channel;
	/** The group's charge rating in amps; absent = no limit from the group. */
	groupMaxChargeAmps?: number;
	/** Set voltage per cell. */
	setVolts: number;
	/** Groups in series on this channel (1 for one group at a time). */
	seriesOnChannel?: number;
	requestedAmps?: number;
}

export type AmpsLimit = 'channel-amps' | 'channel-watts' | 'group-rating' | 'requested';

/**
 * Charge current for a group: min(channel amps, channel watts / (setVolts × seriesOnChannel),
 * group rating, requested). Fails with 'channel-volts' when the channel cannot reach the set voltage.
 */
export function chargeAmps(input: ChargeAmpsInput): Result<{ amps: number; limitedBy: AmpsLimit }> {
	if (!input || typeof input !== 'object' || !input.channel) return fail('invalid-input', 'A channel is needed.');
	const { channel, groupMaxChargeAmps, setVolts, requestedAmps } = input;
	const series = input.seriesOnChannel ?? 1;
	if (!isPositive(channel.maxAmps)) return fail('invalid-channel', 'The channel needs a positive maxAmps.');
	if (!isPositive(channel.maxVolts)) return fail('invalid-channel', 'The channel needs a positive maxVolts.');
	if (channel.maxWatts !== undefined && !isPositive(channel.maxWatts)) {
		return fail('invalid-channel', 'maxWatts must be positive when given.');
	}
	if (!isPositive(setVolts)) return fail('invalid-set-volts', 'The set voltage must be positive.');
	if (!Number.isInteger(series) || series < 1) return fail('invalid-series', 'Series count must be a whole number ≥ 1.');
	if (groupMaxChargeAmps !== undefined && !isPositive(groupMaxChargeAmps)) {
		return fail('invalid-group-rating', 'The group charge rating must be positive when given.');
	}
	if (requestedAmps !== undefined && !isPositive(requestedAmps)) {
		return fail('invalid-requested-amps', 'Requested amps must be positive when given.');
	}
	const packVolts = setVolts * series;
	if (packVolts > channel.maxVolts * (1 + VOLTS_EPSILON) + VOLTS_EPSILON) {
		return fail('channel-volts', `The channel reaches ${channel.maxVolts} V; ${round(packVolts, 3)} V is needed.`);
	}
	let amps = channel.maxAmps;
	let limitedBy: AmpsLimit = 'channel-amps';
	const candidates: [number | undefined, AmpsLimit][] = [
		[channel.maxWatts === undefined ? undefined : channel.maxWatts / packVolts, 'channel-watts'],
		[groupMaxChargeAmps, 'group-rating'],
		[requestedAmps, 'requested']
	];
	for (const [value, label] of candidates) {
		if (value !== undefined && value < amps * (1 - 1e-12)) {
			amps = value;
			limitedBy = label;
		}
	}
	return { ok: true, amps, limitedBy };
}

export interface ChargeInput {
	chemistry: ChemistryId | Chemistry;
	/** Group capacity (P × cell capacity). */
	capacityAh: number;
	/** Start state 0..1; wins over startVolts. */
	startSoc?: number;
	/** Start rest voltage per cell, read on the chemistry's rest curve. */
	startVolts?: number;
	/** Constant-current amps into the group. */
	amps: number;
	/** CV set voltage per cell. */
	setVolts: number;
	/** CV ends when the current falls to this; default terminationC × capacityAh. */
	terminationAmps?: number;
	/** Group resistance (cell resistance / P); only ever moves the CC→CV point earlier. */
	resistanceOhms?: number;
}

export interface ChargeEstimate {
	preHours: number;
	ccHours: number;
	cvHours: number;
	totalHours: number;
	ahIn: number;
	whIn: number;
	/** State of charge where CC hands over to CV. */
	socAtCv: number;
	/** State of charge at termination. */
	endSoc: number;
	/** The start state used (from startSoc or startVolts). */
	startSoc: number;
	terminationAmps: number;
}

/** The model's fixed points for one group at one current; shared by the estimate, re-estimate and plans. */
export interface ChargeModel {
	chemistry: Chemistry;
	capacityAh: number;
	amps: number;
	setVolts: number;
	terminationAmps: number;
	endSoc: number;
	socAtCv: number;
	/** Where pre-charge ends: the soc at the full-discharge voltage. */
	preEndSoc: number;
	preAmps: number;
	/** CV calibration factor k. */
	k: number;
	/** Terminal minus rest volts during CC, so that the terminal voltage meets setVolts at socAtCv. */
	overVolts: number;
}

/** End state (0..1) that a CV hold at `setVolts` reaches: BU-808's rule for the 4.2 V family, the rest curve otherwise. */
export function endSocAtSetVolts(chemistry: Chemistry, setVolts: number): number {
	if (setVolts >= chemistry.maxChargeVolts - VOLTS_EPSILON) return 1;
	if (familyOf(chemistry) === 'li-ion') {
		const steps = (chemistry.maxChargeVolts - setVolts) / LI_ION_VOLTS_PER_STEP;
		return clamp01(1 - LI_ION_SOC_PER_STEP * steps);
	}
	return clamp01(curveSoc(chemistry.restCurve, setVolts));
}

/** Builds the model for checked inputs (no validation here). */
export function chargeModel(
	chemistry: Chemistry,
	capacityAh: number,
	amps: number,
	setVolts: number,
	terminationAmps: number,
	resistanceOhms?: number
): ChargeModel {
	const curve = chemistry.restCurve;
	const endSoc = endSocAtSetVolts(chemistry, setVolts);
	let socAtCv = endSoc - chemistry.cvShareAt1C * (amps / capacityAh);
	if (resistanceOhms !== undefined && resistanceOhms > 0) {
		// A measured I·R hides this much soc at the top of the curve; it can only bring CV earlier.
		const hiddenSoc = Math.max(0, curveSoc(curve, setVolts) - curveSoc(curve, setVolts - amps * resistanceOhms));
		socAtCv = Math.min(socAtCv, endSoc - hiddenSoc);
	}
	socAtCv = Math.max(0, Math.min(endSoc, socAtCv));
	const preEndSoc = Math.min(endSoc, curveSoc(curve, chemistry.fullDischargeVolts));
	return {
		chemistry,
		capacityAh,
		amps,
		setVolts,
		terminationAmps,
		endSoc,
		socAtCv,
		preEndSoc,
		preAmps: Math.min(amps, PRE_CHARGE_C * capacityAh),
		k: cvTaperFactorOf(chemistry),
		overVolts: Math.max(0, setVolts - curveVolts(curve, socAtCv))
	};
}

/** CV current (A) at state `soc` in the model: linear in the charge still to go (an exponential taper). */
export function cvAmpsAt(model: ChargeModel, soc: number): number {
	const { endSoc, socAtCv, amps, terminationAmps } = model;
	if (endSoc - socAtCv <= 1e-12) return terminationAmps;
	const share = Math.max(0, Math.min(1, (endSoc - soc) / (endSoc - socAtCv)));
	return terminationAmps + (amps - terminationAmps) * share;
}

/** The taper's time constant in hours, k included: Qcv / (I − Iterm) × k. */
export function cvTauHours(model: ChargeModel): number {
	const qcv = (model.endSoc - model.socAtCv) * model.capacityAh;
	const drop = model.amps - model.terminationAmps;
	return drop > 0 ? (model.k * qcv) / drop : 0;
}

/** Hours of CV left when the current is `ampsNow`: k·τ·ln(I / Iterm). */
export function cvHoursFrom(model: ChargeModel, ampsNow: number): number {
	if (model.amps <= model.terminationAmps || ampsNow <= model.terminationAmps) return 0;
	return cvTauHours(model) * Math.log(Math.min(ampsNow, model.amps) / model.terminationAmps);
}

/** Runs the model from `startSoc`; `startVolts` (if read) decides pre-charge. */
export function runCharge(model: ChargeModel, startSoc: number, startVolts?: number): ChargeEstimate {
	const { chemistry, capacityAh, amps, setVolts, endSoc, socAtCv, overVolts } = model;
	const curve = chemistry.restCurve;
	let soc = startSoc;
	let preHours = 0;
	let ccHours = 0;
	let cvHours = 0;
	let wh = 0;
	const belowFullDischarge = (startVolts ?? curveVolts(curve, startSoc)) < chemistry.fullDischargeVolts - VOLTS_EPSILON;
	if (belowFullDischarge && soc < model.preEndSoc) {
		const to = model.preEndSoc;
		preHours = ((to - soc) * capacityAh) / model.preAmps;
		wh += capacityAh * (integrateVolts(curve, soc, to) + (overVolts * model.preAmps * (to - soc)) / amps);
		soc = to;
	}
	if (soc < socAtCv) {
		ccHours = ((socAtCv - soc) * capacityAh) / amps;
		wh += capacityAh * Math.min(integrateVolts(curve, soc, socAtCv) + overVolts * (socAtCv - soc), setVolts * (socAtCv - soc));
		soc = socAtCv;
	}
	if (soc < endSoc && amps > model.terminationAmps) {
		cvHours = cvHoursFrom(model, cvAmpsAt(model, soc));
		wh += setVolts * (endSoc - soc) * capacityAh;
		soc = endSoc;
	}
	return {
		preHours,
		ccHours,
		cvHours,
		totalHours: preHours + ccHours + cvHours,
		ahIn: Math.max(0, soc - startSoc) * capacityAh,
		whIn: wh,
		socAtCv,
		endSoc: Math.max(soc, startSoc),
		startSoc,
		terminationAmps: model.terminationAmps
	};
}

/** Checks the parts of a charge input shared with the plans; returns the chemistry and start state. */
export function checkStart(
	chem: Chemistry,
	startSoc: number | undefined,
	startVolts: number | undefined
): { startSoc: number; startVolts?: number } | Failure {
	if (startSoc !== undefined) {
		if (!isFiniteNumber(startSoc) || startSoc < 0 || startSoc > 1) {
			return fail('invalid-start-soc', 'The start state of charge must be from 0 to 1.');
		}
		return { startSoc };
	}
	if (startVolts !== undefined) {
		if (!isPositive(startVolts)) return fail('invalid-start-volts', 'The start voltage must be positive.');
		return { startSoc: clamp01(curveSoc(chem.restCurve, startVolts)), startVolts };
	}
	return fail('missing-start', 'Give a start state of charge or a start rest voltage.');
}

/** Checks a set voltage against the chemistry: not above its maximum (5 mV tolerance), not below full discharge. */
export function checkSetVolts(chem: Chemistry, setVolts: number): Failure | null {
	if (!isPositive(setVolts)) return fail('invalid-set-volts', 'The set voltage must be positive.');
	if (setVolts > chem.maxChargeVolts + SET_VOLTS_TOLERANCE) {
		return fail('set-volts-above-maximum', `${chem.name} charges to ${chem.maxChargeVolts} V per cell at most.`);
	}
	if (setVolts <= chem.fullDischargeVolts) {
		return fail('set-volts-too-low', `A set voltage at or below ${chem.fullDischargeVolts} V charges nothing.`);
	}
	return null;
}

/**
 * CC/CV time to full for one group (hours, Ah and Wh in; voltages per cell, amps and capacity per
 * group). Pre-charge at 0.1C below full discharge; CC to socAtCv = endSoc − cvShareAt1C × C-rate;
 * CV k·Qcv·ln(I/Iterm)/(I − Iterm). Fails on missing start state or a set voltage above the maximum.
 */
export function estimateCharge(input: ChargeInput): Result<ChargeEstimate> {
	if (!input || typeof input !== 'object') return fail('invalid-input', 'A charge input object is needed.');
	const chem = resolveChemistry(input.chemistry);
	if ('ok' in chem) return chem;
	if (!isPositive(input.capacityAh)) return fail('invalid-capacity', 'Capacity must be positive.');
	if (!isPositive(input.amps)) return fail('invalid-amps', 'Charge amps must be positive.');
	const setFailure = checkSetVolts(chem, input.setVolts);
	if (setFailure) return setFailure;
	if (input.terminationAmps !== undefined && !isPositive(input.terminationAmps)) {
		return fail('invalid-termination', 'Termination amps must be positive when given.');
	}
	if (input.resistanceOhms !== undefined && !isNonNegative(input.resistanceOhms)) {
		return fail('invalid-resistance', 'Resistance must be zero or more when given.');
	}
	const start = checkStart(chem, input.startSoc, input.startVolts);
	if ('ok' in start) return start;
	const terminationAmps = input.terminationAmps ?? chem.terminationC * input.capacityAh;
	const model = chargeModel(chem, input.capacityAh, input.amps, input.setVolts, terminationAmps, input.resistanceOhms);
	return { ok: true, ...runCharge(model, start.startSoc, start.startVolts) };
}

function clamp01(x: number): number {
	return Math.max(0, Math.min(1, x));
}

function round(x: number, digits: number): number {
	const f = 10 ** digits;
	return Math.round(x * f) / f;
}
