import { fail, isFiniteNumber, isPositive, type Failure } from './types';

export type ChemistryId = 'nmc' | 'nca' | 'lco' | 'lmo' | 'lfp' | 'lto';

/** Families share one CV calibration factor: the 4.2 V Li-ion family, LFP and LTO. */
export type ChemistryFamily = 'li-ion' | 'lfp' | 'lto';

/** A chemistry profile; voltages are per cell, rates in C (multiples of capacity per hour). */
export interface Chemistry {
	id: string;
	name: string;
	nominalVolts: number;
	maxChargeVolts: number;
	fullDischargeVolts: number;
	minVolts: number;
	storageVolts: number;
	chargeTempC: { min: number; max: number };
	dischargeTempC: { min: number; max: number };
	defaultChargeC: number;
	terminationC: number;
	/** Share of the charge delivered in CV at 1C; it scales with the C-rate. */
	cvShareAt1C: number;
	/** Rest voltage against state of charge, [soc 0..1, volts], soc ascending. */
	restCurve: [number, number][];
	restCurveApproximate: boolean;
	/** Overrides the family derived from maxChargeVolts (custom profiles). */
	family?: ChemistryFamily;
	/** Overrides the family's CV calibration factor k (see docs/engine.md). */
	cvTaperFactor?: number;
}

// IEEE TIM 2025 (Sunil, Pattipati & Balasingam), NMC 21700 C/20 pseudo-OCV breakpoints — references.md §2
const NMC_CURVE: [number, number][] = [
	[0, 2.5],
	[0.005, 2.808],
	[0.0352, 3.1179],
	[0.0854, 3.3182],
	[0.1357, 3.4193],
	[0.2915, 3.5826],
	[0.4523, 3.6941],
	[0.8392, 4.0664],
	[0.9548, 4.1121],
	[1, 4.2]
];

// IEEE TIM 2025, LFP 18650 C/32 pseudo-OCV breakpoints — references.md §2
const LFP_CURVE: [number, number][] = [
	[0, 2.0102],
	[0.0033, 2.4177],
	[0.0117, 2.7405],
	[0.0267, 2.9299],
	[0.0534, 3.0872],
	[0.0885, 3.1942],
	[0.2972, 3.2772],
	[0.9833, 3.3511],
	[0.995, 3.418],
	[1, 3.5981]
];

// Zephyr RTOS include/zephyr/dt-bindings/battery/battery.h, Li-ion (NCA 18650), 0..100 % in 10 % steps — references.md §2
const LI_ION_CURVE: [number, number][] = [
	2.502, 3.146, 3.372, 3.449, 3.532, 3.602, 3.68, 3.764, 3.842, 3.936, 4.032
].map((volts, i) => [i / 10, volts]);

// No published LTO table was found (references.md §2): our own shape, from memory — steep ends,
// gentle middle, 2.4 V nominal near 60 %, ending at the 2.85 V charge limit. Marked approximate.
const LTO_CURVE: [number, number][] = [
	[0, 1.8],
	[0.05, 2.06],
	[0.1, 2.15],
	[0.2, 2.22],
	[0.3, 2.27],
	[0.4, 2.31],
	[0.5, 2.35],
	[0.6, 2.39],
	[0.7, 2.43],
	[0.8, 2.48],
	[0.9, 2.56],
	[0.95, 2.64],
	[1, 2.85]
];

// Shared by every built-in profile:
// charge window 0–45 °C, discharge −20–60 °C — BU-410 "Charging at High and Low Temperatures";
// termination 0.05C — BU-808 lab protocol; 70–80 % goes in during CC at 1C, so 25 % in CV —
// BU-409 "Charging Lithium-ion", TI battery-charging seminar p. 3-7.
const COMMON = {
	chargeTempC: { min: 0, max: 45 },
	dischargeTempC: { min: -20, max: 60 },
	terminationC: 0.05,
	cvShareAt1C: 0.25
} as const;

function profile(p: Omit<Chemistry, keyof typeof COMMON>): Chemistry {
	return {
		...p,
		chargeTempC: { ...COMMON.chargeTempC },
		dischargeTempC: { ...COMMON.dischargeTempC },
		terminationC: COMMON.terminationC,
		cvShareAt1C: COMMON.cvShareAt1C
	};
}

// Voltage limits and charge rates: BU-216 "Summary Table of Lithium-based Batteries" (references.md §1).
// Storage: 40 % SoC (BU-702 "How to Store Batteries") read off each profile's own rest curve [D]:
// NMC 3.658, NCA/LCO/LMO 3.532, LFP 3.288 (inside the 3.275–3.304 V of a 202 Ah LFP datasheet), LTO 2.31.
export const chemistries: Record<ChemistryId, Chemistry> = {
	nmc: profile({
		id: 'nmc',
		name: 'NMC (lithium nickel manganese cobalt oxide)',
		nominalVolts: 3.6,
		maxChargeVolts: 4.2,
		fullDischargeVolts: 3.0,
		minVolts: 2.5,
		storageVolts: 3.66,
		defaultChargeC: 0.7,
		restCurve: NMC_CURVE,
		restCurveApproximate: false
	}),
	nca: profile({
		id: 'nca',
		name: 'NCA (lithium nickel cobalt aluminium oxide)',
		nominalVolts: 3.6,
		maxChargeVolts: 4.2,
		fullDischargeVolts: 3.0,
		minVolts: 2.5,
		storageVolts: 3.53,
		defaultChargeC: 1,
		restCurve: LI_ION_CURVE,
		restCurveApproximate: false
	}),
	lco: profile({
		id: 'lco',
		name: 'LCO (lithium cobalt oxide)',
		nominalVolts: 3.6,
		maxChargeVolts: 4.2,
		fullDischargeVolts: 3.0,
		minVolts: 2.5,
		storageVolts: 3.53,
		defaultChargeC: 0.7,
		restCurve: LI_ION_CURVE,
		restCurveApproximate: true
	}),
	lmo: profile({
		id: 'lmo',
		name: 'LMO (lithium manganese oxide)',
		nominalVolts: 3.7,
		maxChargeVolts: 4.2,
		fullDischargeVolts: 3.0,
		minVolts: 2.5,
		storageVolts: 3.53,
		defaultChargeC: 0.7,
		restCurve: LI_ION_CURVE,
		restCurveApproximate: true
	}),
	lfp: profile({
		id: 'lfp',
		name: 'LFP (lithium iron phosphate)',
		nominalVolts: 3.2,
		maxChargeVolts: 3.65,
		fullDischargeVolts: 2.5,
		minVolts: 2.0,
		storageVolts: 3.29,
		defaultChargeC: 1,
		restCurve: LFP_CURVE,
		restCurveApproximate: false
	}),
	lto: profile({
		id: 'lto',
		name: 'LTO (lithium titanate)',
		nominalVolts: 2.4,
		maxChargeVolts: 2.85,
		fullDischargeVolts: 1.8,
		minVolts: 1.5,
		storageVolts: 2.31,
		defaultChargeC: 1,
		restCurve: LTO_CURVE,
		restCurveApproximate: true
	})
};

/**
 * CV calibration factor k per family: the exponential taper's length is multiplied by k so that
 * charge times match the published envelope (references.md §3). Fitted in calibration.ts, the fit
 * written up in docs/engine.md. LTO has no published charge time: it borrows LFP's k (assumption).
 */
export const cvTaperFactors: Record<ChemistryFamily, number> = {
	'li-ion': 1.75,
	lfp: 1.59,
	lto: 1.59
};

/** The chemistry's k: its own cvTaperFactor, else its family's. */
export function cvTaperFactorOf(chemistry: Chemistry): number {
	return chemistry.cvTaperFactor ?? cvTaperFactors[familyOf(chemistry)];
}

/** True when `id` names a built-in chemistry. */
export function isChemistryId(id: unknown): id is ChemistryId {
	return typeof id === 'string' && Object.prototype.hasOwnProperty.call(chemistries, id);
}

/** Family by the charge limit: ≥ 3.9 V per cell is the 4.2 V Li-ion family, ≥ 3.3 V LFP, else LTO. */
export function familyOf(chemistry: Chemistry): ChemistryFamily {
	if (chemistry.family) return chemistry.family;
	if (chemistry.maxChargeVolts >= 3.9) return 'li-ion';
	if (chemistry.maxChargeVolts >= 3.3) return 'lfp';
	return 'lto';
}

/**
 * A built-in id or a workshop's own profile → a checked Chemistry, or a Failure saying which field
 * is unusable (curve soc strictly ascending within 0..1, volts never falling, limits in order).
 */
export function resolveChemistry(chemistry: ChemistryId | Chemistry | unknown): Chemistry | Failure {
	if (typeof chemistry === 'string') {
		return isChemistryId(chemistry)
			? chemistries[chemistry]
			: fail('unknown-chemistry', `No built-in chemistry "${chemistry}".`);
	}
	if (typeof chemistry !== 'object' || chemistry === null) {
		return fail('invalid-chemistry', 'A chemistry id or profile is needed.');
	}
	const c = chemistry as Chemistry;
	const volts = [c.minVolts, c.fullDischargeVolts, c.nominalVolts, c.maxChargeVolts, c.storageVolts];
	if (!volts.every(isPositive)) return fail('invalid-chemistry', 'Every voltage must be a positive number.');
	if (!(c.minVolts <= c.fullDischargeVolts && c.fullDischargeVolts < c.nominalVolts && c.nominalVolts < c.maxChargeVolts)) {
		return fail('invalid-chemistry', 'Voltages must rise: minimum ≤ full discharge < nominal < maximum charge.');
	}
	if (!isPositive(c.defaultChargeC) || !isPositive(c.terminationC)) {
		return fail('invalid-chemistry', 'Charge rate and termination rate must be positive.');
	}
	if (!isFiniteNumber(c.cvShareAt1C) || c.cvShareAt1C < 0 || c.cvShareAt1C >= 1) {
		return fail('invalid-chemistry', 'cvShareAt1C must be at least 0 and below 1.');
	}
	if (c.cvTaperFactor !== undefined && !isPositive(c.cvTaperFactor)) {
		return fail('invalid-chemistry', 'cvTaperFactor must be positive.');
	}
	if (
		!c.chargeTempC ||
		!c.dischargeTempC ||
		![c.chargeTempC.min, c.chargeTempC.max, c.dischargeTempC.min, c.dischargeTempC.max].every(isFiniteNumber) ||
		c.chargeTempC.min >= c.chargeTempC.max
	) {
		return fail('invalid-chemistry', 'Temperature windows need a finite min below max.');
	}
	const curve = c.restCurve;
	if (!Array.isArray(curve) || curve.length < 2) {
		return fail('invalid-chemistry', 'The rest curve needs at least two points.');
	}
	for (let i = 0; i < curve.length; i++) {
		const point = curve[i];
		if (!Array.isArray(point) || !isFiniteNumber(point[0]) || !isPositive(point[1]) || point[0] < 0 || point[0] > 1) {
			return fail('invalid-chemistry', `Rest curve point ${i + 1} must be [soc 0..1, volts > 0].`);
		}
		if (i > 0 && (point[0] <= curve[i - 1][0] || point[1] < curve[i - 1][1])) {
			return fail('invalid-chemistry', 'Rest curve soc must rise and its volts never fall.');
		}
	}
	if (curve[curve.length - 1][1] <= curve[0][1]) {
		return fail('invalid-chemistry', 'The rest curve must not be flat from end to end.');
	}
	return c;
}
