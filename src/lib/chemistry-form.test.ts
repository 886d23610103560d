import { describe, expect, it } from 'vitest';
import { chemistries, type ChemistryId } from '$lib/engine';
import { beyondUsualLimits, chargesBelowFreezing, datasheetConfirmationMessage, formValuesOf } from './chemistry-form';

describe('beyondUsualLimits', () => {
	it.each(Object.keys(chemistries) as ChemistryId[])('finds nothing past the usual limits in the built-in %s', (id) => {
		expect(beyondUsualLimits(formValuesOf(chemistries[id]))).toEqual([]);
	});

	// The usual limits written out here from their sources, not read from the code under test:
	// full charge 4.20 V (4.2 V family), 3.65 V (LFP), 2.85 V (LTO) and charge rates of at most 1C —
	// BU-216; charging between 0 and 45 °C — BU-410.
	const within = {
		'li-ion': { family: 'li-ion', maxChargeVolts: 4.2, defaultChargeC: 1, chargeTempMinC: 0, chargeTempMaxC: 45 },
		lfp: { family: 'lfp', maxChargeVolts: 3.65, defaultChargeC: 1, chargeTempMinC: 0, chargeTempMaxC: 45 },
		lto: { family: 'lto', maxChargeVolts: 2.85, defaultChargeC: 1, chargeTempMinC: 0, chargeTempMaxC: 45 }
	} as const;

	it.each(Object.values(within))('accepts the edge of the usual limits for $family', (limits) => {
		expect(beyondUsualLimits(limits)).toEqual([]);
	});

	it.each([
		{ name: 'a 4.35 V high-voltage Li-ion cell', values: { ...within['li-ion'], maxChargeVolts: 4.35 }, words: /4\.350\s?V, above the 4\.200\s?V/ },
		{ name: 'an LFP cell charged to 3.70 V', values: { ...within.lfp, maxChargeVolts: 3.7 }, words: /3\.700\s?V, above the 3\.650\s?V/ },
		{ name: 'a Li-ion cell charged at 2C', values: { ...within['li-ion'], defaultChargeC: 2 }, words: /2C, faster than the 1C/ },
		{ name: 'charging up to 60 °C', values: { ...within.lfp, chargeTempMaxC: 60 }, words: /60\s?°C, above the usual 45\s?°C/ },
		{ name: 'charging from −10 °C', values: { ...within.lto, chargeTempMinC: -10 }, words: /−?-?10\s?°C, below 0\s?°C/ }
	])('names $name', ({ values, words }) => {
		const found = beyondUsualLimits(values);
		expect(found).toHaveLength(1);
		expect(found[0]).toMatch(words);
	});

	it('lists every limit passed, and the refusal names the datasheet', () => {
		const found = beyondUsualLimits({ ...within['li-ion'], maxChargeVolts: 4.4, chargeTempMaxC: 50 });
		expect(found).toHaveLength(2);
		expect(datasheetConfirmationMessage(found)).toMatch(/cell maker’s datasheet allows this/);
	});
});

describe('chargesBelowFreezing (lithium plating below 0 °C — BU-410)', () => {
	it.each([
		[-5, true],
		[-0.5, true],
		[0, false],
		[10, false]
	])('%d °C → %s', (chargeTempMinC, expected) => {
		expect(chargesBelowFreezing({ chargeTempMinC })).toBe(expected);
	});
});
