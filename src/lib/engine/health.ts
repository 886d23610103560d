/**
 * Group health across sessions: a group's capacity counted between two rest states, its charge
 * resistance from the voltage jump at a current step, a least-squares trend with standard errors,
 * and how many charges remain until the capacity falls to a share of its first value.
 *
 * Volts are per cell (a group's cells in parallel share one voltage); Ah, amps and resistance are
 * per group, as everywhere in the engine (docs/engine.md, "Group health").
 */
import { SimpleLinearRegression } from 'ml-regression-simple-linear';
import { resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
import { socFromRestVoltage } from './soc';
import { fail, isFiniteNumber, isPositive, MS_PER_MINUTE, type Result } from './types';

/** Smallest change of SoC (0..1) between the two rest states that a capacity is divided by. */
export const MIN_SOC_CHANGE = 0.2;
/** Longest time between the readings around a current step (ms) before the jump is lost in settling. */
export const DEFAULT_MAX_STEP_GAP_MS = 2 * MS_PER_MINUTE;
/** Smallest current step (A) whose voltage jump stands clear of a meter's last digit. */
export const DEFAULT_MIN_STEP_AMPS = 0.5;
/** A projection further ahead than this many times the span of measured charges is not given. */
export const MAX_PROJECTION_SPANS = 10;

const pct = (share: number) => `${Math.round(share * 100)} %`;
const fixed = (value: number, digits: number) => value.toFixed(digits);

export interface CapacityInput {
	chemistry: ChemistryId | Chemistry;
	/** Rest volts per cell before the counted charge or discharge (read after resting). */
	restVoltsBefore: number;
	/** Rest volts per cell after it (read after resting again). */
	restVoltsAfter: number;
	/** Ah per group between the two rest states: put in positive, taken out negative. */
	ahBetween: number;
	/** ± volts of the meter and the rest for the capacity range (default 0.01 V). */
	toleranceVolts?: number;
}

export interface CapacityFromRest {
	capacityAh: number;
	/** SoC 0..1 at each rest voltage. */
	socBefore: number;
	socAfter: number;
	/** The capacity range that ±toleranceVolts on both readings allows (wide on LFP's plateau). */
	capacityLowAh: number;
	/** null when the tolerance lets the two readings sit at the same SoC (no upper bound). */
	capacityHighAh: number | null;
	/** True when the chemistry's rest curve is marked approximate. */
	approximate: boolean;
}

/**
 * Capacity (Ah per group) = |Ah between| ÷ |SoC after − SoC before|, the SoCs read off the
 * chemistry's rest curve. Fails for volts off the curve, a SoC change under 20 points, or Ah whose
 * sign disagrees with the way the voltage moved.
 */
export function capacityFromRestStates(input: CapacityInput): Result<CapacityFromRest> {
	if (!input || typeof input !== 'object') return fail('invalid-input', 'Two rest voltages and the Ah between them are needed.');
	const chem = resolveChemistry(input.chemistry);
	if ('ok' in chem) return chem;
	const { restVoltsBefore: before, restVoltsAfter: after, ahBetween } = input;
	const tolerance = input.toleranceVolts ?? 0.01;
	if (!isFiniteNumber(before) || !isFiniteNumber(after)) {
		return fail('invalid-volts', 'Both rest voltages must be numbers.');
	}
	if (!isFiniteNumber(ahBetween) || ahBetween === 0) {
		return fail('invalid-ah', 'The Ah put in or taken out between the two rest readings must be a number other than 0.');
	}
	if (!isFiniteNumber(tolerance) || tolerance < 0) {
		return fail('invalid-tolerance', 'The meter tolerance must be a number of zero or more.');
	}
	const curve = chem.restCurve;
	const lowest = curve[0][1];
	const highest = curve[curve.length - 1][1];
	for (const [label, volts] of [['before', before], ['after', after]] as const) {
		if (volts < lowest || volts > highest) {
			return fail(
				'outside-rest-curve',
				`The rest voltage ${label} (${fixed(volts, 3)} V per cell) lies outside the chemistry's rest-voltage table (${fixed(lowest, 3)}–${fixed(highest, 3)} V), so its state of charge is unknown.`
			);
		}
	}
	const b = socFromRestVoltage(chem, before, tolerance);
	const a = socFromRestVoltage(chem, after, tolerance);
	if (!b.ok) return b;
	if (!a.ok) return a;
	const change = a.soc - b.soc;
	if (change !== 0 && Math.sign(change) !== Math.sign(ahBetween)) {
		return fail(
			'sign-mismatch',
			ahBetween > 0
				? `Charge was put in, but the rest voltage fell (state of charge ${pct(b.soc)} → ${pct(a.soc)}). Check which rest reading came first and whether the Ah were put in or taken out.`
				: `Charge was taken out, but the rest voltage rose (state of charge ${pct(b.soc)} → ${pct(a.soc)}). Check which rest reading came first and whether the Ah were put in or taken out.`
		);
	}
	if (Math.abs(change) < MIN_SOC_CHANGE) {
		return fail(
			'soc-change-too-small',
			`The two rest readings are only ${Math.floor(Math.abs(change) * 100)} % of charge apart; at least ${pct(MIN_SOC_CHANGE)} is needed, because a few millivolts of error in either reading would change the capacity a lot. Charge or discharge further between the two rest readings.`
		);
	}
	const ah = Math.abs(ahBetween);
	// Widest and narrowest SoC change the tolerance band allows, in the direction of the change.
	const widest = change > 0 ? a.socHigh - b.socLow : b.socHigh - a.socLow;
	const narrowest = change > 0 ? a.socLow - b.socHigh : b.socLow - a.socHigh;
	return {
		ok: true,
		capacityAh: ah / Math.abs(change),
		socBefore: b.soc,
		socAfter: a.soc,
		capacityLowAh: ah / widest,
		capacityHighAh: narrowest > 0 ? ah / narrowest : null,
		approximate: a.approximate
	};
}

export interface CurrentStepReading {
	/** Volts per cell of the group. */
	volts: number;
	/** Amps into the group: charge positive, discharge negative, 0 at rest. */
	amps: number;
	/** When the reading was taken (ms since the epoch). */
	takenAt: number;
}

export interface StepResistanceOptions {
	/** Longest time between the two readings (ms, default 2 minutes). */
	maxGapMs?: number;
	/** Smallest current step that is used (A, default 0.5). */
	minDeltaAmps?: number;
	/** The meter's last digit (V, default 0.001) for the ± of the result. */
	voltsResolution?: number;
}

export interface StepResistance {
	milliohms: number;
	/** after − before. */
	deltaVolts: number;
	deltaAmps: number;
	/** ± milliohms that one last digit on each reading allows. */
	uncertaintyMilliohms: number;
}

/**
 * The group's charge resistance (mΩ per group) = ΔV / ΔI between a reading just before and one just
 * after the current starts, stops or changes. Fails for a small current step, readings too far
 * apart or out of order, or a voltage that moved against the current.
 */
export function chargeResistance(
	before: CurrentStepReading,
	after: CurrentStepReading,
	options: StepResistanceOptions = {}
): Result<StepResistance> {
	const readingOk = (r: CurrentStepReading) => !!r && isFiniteNumber(r.volts) && r.volts >= 0 && isFiniteNumber(r.amps) && isFiniteNumber(r.takenAt);
	if (!readingOk(before) || !readingOk(after)) {
		return fail('invalid-reading', 'Each reading needs a voltage, a current and the time it was taken.');
	}
	const maxGapMs = options.maxGapMs ?? DEFAULT_MAX_STEP_GAP_MS;
	const minDeltaAmps = options.minDeltaAmps ?? DEFAULT_MIN_STEP_AMPS;
	const resolution = options.voltsResolution ?? 0.001;
	if (!isPositive(maxGapMs) || !isPositive(minDeltaAmps) || !isFiniteNumber(resolution) || resolution < 0) {
		return fail('invalid-options', 'The time limit and the smallest current step must be positive, the meter resolution zero or more.');
	}
	const gap = after.takenAt - before.takenAt;
	if (gap < 0) {
		return fail('readings-out-of-order', 'The reading after the current changed was taken before the one before it. Swap them or check the times.');
	}
	if (gap > maxGapMs) {
		return fail(
			'readings-too-far-apart',
			`The two readings are ${fixed(gap / MS_PER_MINUTE, 1)} minutes apart; in that time the voltage settles and the jump is lost (at most ${fixed(maxGapMs / MS_PER_MINUTE, 1)} minutes). Take a reading just before and within a minute after the current changes.`
		);
	}
	const deltaAmps = after.amps - before.amps;
	const deltaVolts = after.volts - before.volts;
	if (Math.abs(deltaAmps) < minDeltaAmps) {
		return fail(
			'current-step-too-small',
			`The current changed by only ${fixed(Math.abs(deltaAmps), 2)} A; at least ${fixed(minDeltaAmps, 2)} A is needed so that the voltage jump stands clear of the meter's last digit. Start or stop a larger current between the two readings.`
		);
	}
	if (deltaVolts === 0 || Math.sign(deltaVolts) !== Math.sign(deltaAmps)) {
		return fail(
			'inconsistent-sign',
			deltaVolts === 0
				? 'The voltage did not move when the current changed. Check that both readings are of the same group and taken at its terminals.'
				: `The voltage ${deltaVolts > 0 ? 'rose' : 'fell'} when the current ${deltaAmps > 0 ? 'rose' : 'fell'}, which a group cannot do. Check that both readings are of the same group and that charge current is written positive.`
		);
	}
	const ohms = deltaVolts / deltaAmps;
	return {
		ok: true,
		milliohms: ohms * 1000,
		deltaVolts,
		deltaAmps,
		uncertaintyMilliohms: ((2 * resolution) / Math.abs(deltaAmps)) * 1000
	};
}

export interface TrendPoint {
	x: number;
	y: number;
}

export interface LinearTrend {
	slope: number;
	intercept: number;
	slopeStdError: number;
	interceptStdError: number;
	/** √(Σ residual² / (n − 2)). */
	residualStdDev: number;
	n: number;
}

/**
 * Least-squares line y = intercept + slope·x (fit by ml-regression-simple-linear on x centred at its
 * mean, so large x such as times in ms lose no digits), with standard errors from the residuals:
 * SE(slope) = s/√Sxx, SE(intercept) = s·√(1/n + x̄²/Sxx), s = √(SSE/(n − 2)). Needs n ≥ 3, two x.
 */
export function linearTrend(points: TrendPoint[]): Result<LinearTrend> {
	if (!Array.isArray(points) || points.some((p) => !p || !isFiniteNumber(p.x) || !isFiniteNumber(p.y))) {
		return fail('invalid-points', 'Every point of a trend needs two numbers.');
	}
	const n = points.length;
	if (n < 3) {
		return fail('too-few-points', `A trend with its uncertainty needs at least three points; there ${n === 1 ? 'is' : 'are'} ${n}.`);
	}
	const meanX = points.reduce((sum, p) => sum + p.x, 0) / n;
	const xs = points.map((p) => p.x - meanX);
	const sxx = xs.reduce((sum, x) => sum + x * x, 0);
	if (!(sxx > 0)) return fail('no-spread', 'All points sit at the same place along the axis, so there is no trend to draw.');
	const fit = new SimpleLinearRegression(xs, points.map((p) => p.y));
	const slope = fit.slope;
	const centredIntercept = fit.intercept;
	let sse = 0;
	for (let i = 0; i < n; i++) sse += (points[i].y - (centredIntercept + slope * xs[i])) ** 2;
	const residualStdDev = Math.sqrt(sse / (n - 2));
	const result = {
		slope,
		intercept: centredIntercept - slope * meanX,
		slopeStdError: residualStdDev / Math.sqrt(sxx),
		interceptStdError: residualStdDev * Math.sqrt(1 / n + (meanX * meanX) / sxx),
		residualStdDev,
		n
	};
	if (!Object.values(result).every(isFiniteNumber)) {
		return fail('no-trend', 'These points are too large or too far apart to draw a trend through.');
	}
	return { ok: true, ...result };
}

export interface FadePoint {
	/** The charge's index or count (0, 1, 2… or cycle numbers) the capacity was measured at. */
	charge: number;
	capacityAh: number;
}

export interface FadeProjection {
	/** Charges after the last measured one until the line reaches the target. */
	chargesFromLast: number;
	/** The charge (on the points' own count) at which the line reaches the target. */
	atCharge: number;
	slopeAhPerCharge: number;
	slopeStdError: number;
	/** Capacity measured at the earliest charge. */
	firstCapacityAh: number;
	/** fraction × firstCapacityAh. */
	targetCapacityAh: number;
	lastCharge: number;
}

/**
 * When the fitted capacity line falls to `fraction` (default 0.8) of the first measured capacity.
 * Given only with ≥ 3 points and a slope below zero by more than two standard errors; not when the
 * group is already there or the projection reaches beyond ten times the span of measured charges.
 */
export function chargesUntilFade(points: FadePoint[], options: { fraction?: number } = {}): Result<FadeProjection> {
	const fraction = options.fraction ?? 0.8;
	if (!isFiniteNumber(fraction) || fraction <= 0 || fraction >= 1) {
		return fail('invalid-fraction', 'The share of the first capacity must lie between 0 and 100 %.');
	}
	if (!Array.isArray(points) || points.some((p) => !p || !isFiniteNumber(p.charge) || p.charge < 0 || !isPositive(p.capacityAh))) {
		return fail('invalid-points', 'Every measured capacity needs a charge count of zero or more and a capacity above 0 Ah.');
	}
	if (points.length < 3) {
		return fail(
			'too-few-points',
			`A forecast needs capacities measured at three or more charges; there ${points.length === 1 ? 'is' : 'are'} ${points.length === 0 ? 'none' : points.length} so far. Measure the capacity at the next charges.`
		);
	}
	const sorted = [...points].sort((p, q) => p.charge - q.charge);
	const firstCharge = sorted[0].charge;
	const lastCharge = sorted[sorted.length - 1].charge;
	if (lastCharge === firstCharge) {
		return fail('no-spread', 'All capacities were measured at the same charge. Measure them at later charges too.');
	}
	const trend = linearTrend(sorted.map((p) => ({ x: p.charge, y: p.capacityAh })));
	if (!trend.ok) return trend;
	// The first capacity is the mean of those measured at the earliest charge.
	const atFirst = sorted.filter((p) => p.charge === firstCharge);
	const firstCapacityAh = atFirst.reduce((sum, p) => sum + p.capacityAh, 0) / atFirst.length;
	const targetCapacityAh = fraction * firstCapacityAh;
	if (trend.slope + 2 * trend.slopeStdError >= 0) {
		return fail(
			'no-clear-loss',
			trend.slope >= 0
				? 'No clear loss of capacity yet: the measured capacities do not fall. Keep measuring at later charges.'
				: 'No clear loss of capacity yet: the fall is smaller than the scatter of the measurements. Keep measuring at later charges.'
		);
	}
	const atCharge = (targetCapacityAh - trend.intercept) / trend.slope;
	const chargesFromLast = atCharge - lastCharge;
	if (chargesFromLast <= 0) {
		return fail(
			'already-below',
			`At this rate the group is already below ${pct(fraction)} of its first capacity (${fixed(targetCapacityAh, 2)} Ah).`
		);
	}
	if (chargesFromLast > MAX_PROJECTION_SPANS * (lastCharge - firstCharge)) {
		return fail(
			'projection-too-far',
			`At this rate it would take about ${Math.round(chargesFromLast)} more charges, more than ${MAX_PROJECTION_SPANS} times the ${lastCharge - firstCharge} charges measured so far; that is too far ahead to trust. Keep measuring at later charges.`
		);
	}
	return {
		ok: true,
		chargesFromLast,
		atCharge,
		slopeAhPerCharge: trend.slope,
		slopeStdError: trend.slopeStdError,
		firstCapacityAh,
		targetCapacityAh,
		lastCharge
	};
}
