import { chemistries, type ChemistryFamily, type ChemistryId } from './chemistry';
import { estimateCharge } from './charge';

/** One published charge time: CC at `cRate` to the chemistry's maximum, CV to `terminationC`, from full discharge. */
export interface EnvelopePoint {
	family: ChemistryFamily;
	/** The built-in profile the point is run on. */
	chemistry: ChemistryId;
	cRate: number;
	terminationC: number;
	hours: number;
	source: string;
}

/** The published charge-time envelope that k is fitted to (references.md §3). */
export const chargeEnvelope: EnvelopePoint[] = [
	{ family: 'li-ion', chemistry: 'nmc', cRate: 0.2, terminationC: 0.01, hours: 6, source: 'generic cell datasheet, references.md §3' },
	{ family: 'li-ion', chemistry: 'nmc', cRate: 0.5, terminationC: 0.01, hours: 3, source: 'generic cell datasheet, references.md §3' },
	// BU-409 "Charging Lithium-ion": 1C full charge ≈ 2–3 h; the middle, with BU-808's 0.05C termination.
	{ family: 'li-ion', chemistry: 'nmc', cRate: 1, terminationC: 0.05, hours: 2.5, source: 'BU-409 (2–3 h)' },
	{ family: 'lfp', chemistry: 'lfp', cRate: 1, terminationC: 0.05, hours: 2, source: 'LFP cell datasheet, references.md §3' }
];

/** Hours of one envelope point as the model gives them with calibration factor `k`. */
export function modelHours(point: EnvelopePoint, k: number): number {
	const base = chemistries[point.chemistry];
	const result = estimateCharge({
		chemistry: { ...base, cvTaperFactor: k },
		capacityAh: 1,
		startVolts: base.fullDischargeVolts,
		amps: point.cRate,
		setVolts: base.maxChargeVolts,
		terminationAmps: point.terminationC
	});
	return result.ok ? result.totalHours : Number.NaN;
}

/**
 * Least-squares fit of k on relative error: hours = a + b·k per point (a = pre + CC, b = CV at k = 1),
 * so k = Σ(b/T)(T − a)/T ÷ Σ(b/T)². Returns k and each point's model hours and error.
 */
export function fitCvTaperFactor(points: EnvelopePoint[]): {
	k: number;
	rows: { point: EnvelopePoint; hours: number; errorPercent: number }[];
} {
	let num = 0;
	let den = 0;
	for (const p of points) {
		const a = modelHours(p, 1e-12);
		const b = modelHours(p, 1) - a;
		num += ((b / p.hours) * (p.hours - a)) / p.hours;
		den += (b / p.hours) ** 2;
	}
	const k = num / den;
	const rows = points.map((point) => {
		const hours = modelHours(point, k);
		return { point, hours, errorPercent: ((hours - point.hours) / point.hours) * 100 };
	});
	return { k, rows };
}
