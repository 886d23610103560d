/** Form values for a chemistry profile from the engine's built-ins or a saved profile (client-safe). */
import { chemistries, familyOf, type Chemistry, type ChemistryFamily, type ChemistryId } from '$lib/engine';
import { percentFromSoc, type ChemistryProfileInput } from '$lib/schemas/chemistry';

/** The form's values of a chemistry; name and source are left to the caller. */
export function formValuesOf(c: Chemistry): Omit<ChemistryProfileInput, 'name' | 'source'> {
	return {
		family: familyOf(c),
		minVolts: c.minVolts,
		fullDischargeVolts: c.fullDischargeVolts,
		nominalVolts: c.nominalVolts,
		maxChargeVolts: c.maxChargeVolts,
		storageVolts: c.storageVolts,
		chargeTempMinC: c.chargeTempC.min,
		chargeTempMaxC: c.chargeTempC.max,
		dischargeTempMinC: c.dischargeTempC.min,
		dischargeTempMaxC: c.dischargeTempC.max,
		defaultChargeC: c.defaultChargeC,
		terminationC: c.terminationC,
		cvShareAt1C: c.cvShareAt1C,
		restCurve: c.restCurve.map(([soc, volts]) => ({ socPercent: percentFromSoc(soc), volts }))
	};
}

export const builtInChoices = (Object.keys(chemistries) as ChemistryId[]).map((id) => ({
	id,
	name: chemistries[id].name
}));

/** A cell voltage as look.md writes it: three decimals, a thin space, V. */
export const cellVolts = (v: number) => `${v.toFixed(3)}\u2009V`;

/**
 * The usual charging limits of each family, per cell. Full charge and charge rate: BU-216 "Summary
 * Table of Lithium-based Batteries" (4.20 V and 0.7–1C for the 4.2 V family, 3.65 V and 1C for LFP,
 * 2.85 V and 1C for LTO); highest charging temperature 45 °C: BU-410 "Charging at High and Low
 * Temperatures" (references.md §1 and §4). A profile past any of them must name the datasheet.
 */
export const usualChargeLimits: Record<ChemistryFamily, { maxChargeVolts: number; chargeC: number; chargeTempMaxC: number }> = {
	'li-ion': { maxChargeVolts: 4.2, chargeC: 1, chargeTempMaxC: 45 },
	lfp: { maxChargeVolts: 3.65, chargeC: 1, chargeTempMaxC: 45 },
	lto: { maxChargeVolts: 2.85, chargeC: 1, chargeTempMaxC: 45 }
};

/** Lithium plates on the anode when a Li-ion cell (LFP included) charges below this — BU-410. */
export const PLATING_BELOW_C = 0;

export type ChemistryLimitsInput = Pick<
	ChemistryProfileInput,
	'family' | 'maxChargeVolts' | 'defaultChargeC' | 'chargeTempMinC' | 'chargeTempMaxC'
>;

// Form values are typed to the mV and the tenth of a degree; a float such as 4.2000000001 is not "above".
const above = (value: number, limit: number) => value - limit > 1e-9;

/**
 * Where a profile charges past its family's usual limits, in words ("charges to 4.350 V, above the
 * 4.200 V usual for its family"); empty when it stays within them. Charging below 0 °C counts too.
 */
export function beyondUsualLimits(p: ChemistryLimitsInput): string[] {
	const usual = usualChargeLimits[p.family];
	if (!usual) return [];
	const found: string[] = [];
	if (above(p.maxChargeVolts, usual.maxChargeVolts)) {
		found.push(`charges to ${cellVolts(p.maxChargeVolts)}, above the ${cellVolts(usual.maxChargeVolts)} usual for its family`);
	}
	if (above(p.defaultChargeC, usual.chargeC)) {
		found.push(`charges at ${p.defaultChargeC}C, faster than the ${usual.chargeC}C usual for its family`);
	}
	if (above(p.chargeTempMaxC, usual.chargeTempMaxC)) {
		found.push(`charges up to ${p.chargeTempMaxC}\u2009°C, above the usual ${usual.chargeTempMaxC}\u2009°C`);
	}
	if (p.chargeTempMinC < PLATING_BELOW_C) {
		found.push(`charges from ${p.chargeTempMinC}\u2009°C, below ${PLATING_BELOW_C}\u2009°C`);
	}
	return found;
}

/** True when the profile lets a charge start below 0 °C, where lithium plating begins (BU-410). */
export const chargesBelowFreezing = (p: Pick<ChemistryProfileInput, 'chargeTempMinC'>) => p.chargeTempMinC < PLATING_BELOW_C;

/** The refusal when a profile goes past the usual limits and nobody confirmed the datasheet allows it. */
export function datasheetConfirmationMessage(beyond: string[]): string {
	return `This profile ${beyond.join('; it ')}. Check that the cell maker’s datasheet allows this, then tick “The cell maker’s datasheet allows this”.`;
}
