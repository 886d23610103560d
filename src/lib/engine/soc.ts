import { resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
import { fail, isFiniteNumber, type Failure, type Result } from './types';

type Curve = readonly (readonly [number, number])[];

/** Rest volts at `soc` on a checked curve; soc is clamped to the curve's ends. */
export function curveVolts(curve: Curve, soc: number): number {
	const first = curve[0];
	const last = curve[curve.length - 1];
	if (soc <= first[0]) return first[1];
	if (soc >= last[0]) return last[1];
	let lo = 0;
	let hi = curve.length - 1;
	while (hi - lo > 1) {
		const mid = (lo + hi) >> 1;
		if (curve[mid][0] <= soc) lo = mid;
		else hi = mid;
	}
	const [s0, v0] = curve[lo];
	const [s1, v1] = curve[hi];
	return v0 + ((soc - s0) / (s1 - s0)) * (v1 - v0);
}

/** Lowest soc whose rest volts reach `volts` (clamped to the curve's first soc). */
function lowestSoc(curve: Curve, volts: number): number {
	if (volts <= curve[0][1]) return curve[0][0];
	for (let i = 0; i < curve.length - 1; i++) {
		const [s0, v0] = curve[i];
		const [s1, v1] = curve[i + 1];
		if (v1 >= volts) return s0 + ((volts - v0) / (v1 - v0)) * (s1 - s0);
	}
	return curve[curve.length - 1][0];
}

/** Highest soc whose rest volts do not exceed `volts` (clamped to the curve's last soc). */
function highestSoc(curve: Curve, volts: number): number {
	const n = curve.length;
	if (volts >= curve[n - 1][1]) return curve[n - 1][0];
	for (let i = n - 1; i > 0; i--) {
		const [s0, v0] = curve[i - 1];
		const [s1, v1] = curve[i];
		if (v0 <= volts) return s0 + ((volts - v0) / (v1 - v0)) * (s1 - s0);
	}
	return curve[0][0];
}

/** Soc at `volts` on a checked curve; on a flat run of equal volts, its middle. */
export function curveSoc(curve: Curve, volts: number): number {
	return (lowestSoc(curve, volts) + highestSoc(curve, volts)) / 2;
}

/** s0, the curve's nodes strictly between, s1. */
function cutsBetween(curve: Curve, s0: number, s1: number): number[] {
	const cuts = [s0];
	for (const [s] of curve) if (s > s0 && s < s1) cuts.push(s);
	cuts.push(s1);
	return cuts;
}

/** ∫ volts d(soc) from s0 to s1 (s0 ≤ s1), exact for the piecewise-linear curve. */
export function integrateVolts(curve: Curve, s0: number, s1: number): number {
	if (s1 <= s0) return 0;
	let total = 0;
	const cuts = cutsBetween(curve, s0, s1);
	for (let i = 0; i < cuts.length - 1; i++) {
		total += ((curveVolts(curve, cuts[i]) + curveVolts(curve, cuts[i + 1])) / 2) * (cuts[i + 1] - cuts[i]);
	}
	return total;
}

/** ∫ d(soc) / volts from s0 to s1 (s0 ≤ s1), exact for the piecewise-linear curve. */
export function integrateInverseVolts(curve: Curve, s0: number, s1: number): number {
	if (s1 <= s0) return 0;
	let total = 0;
	const cuts = cutsBetween(curve, s0, s1);
	for (let i = 0; i < cuts.length - 1; i++) {
		const va = curveVolts(curve, cuts[i]);
		const vb = curveVolts(curve, cuts[i + 1]);
		const ds = cuts[i + 1] - cuts[i];
		total += Math.abs(vb - va) < 1e-12 ? ds / va : (ds * Math.log(vb / va)) / (vb - va);
	}
	return total;
}

export interface SocReading {
	soc: number;
	socLow: number;
	socHigh: number;
	/** True when the chemistry's rest curve is marked approximate. */
	approximate: boolean;
}

/**
 * State of charge (0..1) from a rest voltage per cell, clamped to the curve's ends, with the soc
 * range that ±toleranceVolts allows (wide on LFP's plateau). Read after 2 h rest (TI SLVUDW8).
 */
export function socFromRestVoltage(
	chemistry: ChemistryId | Chemistry,
	volts: number,
	toleranceVolts = 0.01
): Result<SocReading> {
	const chem = resolveChemistry(chemistry);
	if ('ok' in chem) return chem;
	if (!isFiniteNumber(volts) || volts < 0) return fail('invalid-volts', 'Volts must be a number of zero or more.');
	if (!isFiniteNumber(toleranceVolts) || toleranceVolts < 0) {
		return fail('invalid-tolerance', 'The tolerance must be a number of zero or more.');
	}
	const curve = chem.restCurve;
	return {
		ok: true,
		soc: curveSoc(curve, volts),
		socLow: lowestSoc(curve, volts - toleranceVolts),
		socHigh: highestSoc(curve, volts + toleranceVolts),
		approximate: chem.restCurveApproximate
	};
}

/**
 * Rest voltage per cell at a state of charge (0..1, clamped to the curve's ends); a Failure only
 * for an unusable chemistry or a soc that is not a number.
 */
export function restVoltageFromSoc(chemistry: ChemistryId | Chemistry, soc: number): number | Failure {
	const chem = resolveChemistry(chemistry);
	if ('ok' in chem) return chem;
	if (!isFiniteNumber(soc)) return fail('invalid-soc', 'State of charge must be a number from 0 to 1.');
	return curveVolts(chem.restCurve, soc);
}
