/** Form values for a chemistry profile from the engine's built-ins or a saved profile (client-safe). */
import { chemistries, familyOf, type Chemistry, type ChemistryId } from '$lib/engine';
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
