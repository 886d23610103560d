import { describe, expect, it } from 'vitest';
import { chemistries } from '$lib/engine';
import { perCellVolts, readingProblems } from './readings-math';

// Worked by hand: a pack of S groups in series reads S times the volts of one group, so a
// whole-pack reading per cell is the pack's volts ÷ S (13 × 4.2 = 54.6, 16 × 3.65 = 58.4,
// 14 × 3.6 = 50.4, 4 × 3.2 = 12.8).
describe('perCellVolts', () => {
	it.each([
		{ case: '13S NMC pack at full charge', groupIndex: null, volts: 54.6, series: 13, perCell: 4.2 },
		{ case: '16S LFP pack at full charge', groupIndex: null, volts: 58.4, series: 16, perCell: 3.65 },
		{ case: '14S pack at nominal', groupIndex: null, volts: 50.4, series: 14, perCell: 3.6 },
		{ case: '4S LFP house battery', groupIndex: null, volts: 12.8, series: 4, perCell: 3.2 },
		{ case: 'a group reading is already per cell', groupIndex: 5, volts: 3.912, series: 13, perCell: 3.912 },
		{ case: '1S pack: the pack is the group', groupIndex: null, volts: 4.1, series: 1, perCell: 4.1 }
	])('$case', ({ groupIndex, volts, series, perCell }) => {
		expect(perCellVolts({ groupIndex, volts }, series)).toBeCloseTo(perCell, 9);
	});

	it('has no per-cell volts without volts or without a usable series', () => {
		expect(perCellVolts({ groupIndex: null, volts: null }, 13)).toBeNull();
		expect(perCellVolts({ groupIndex: 2 }, 13)).toBeNull();
		expect(perCellVolts({ groupIndex: null, volts: 50 }, 0)).toBeNull();
		expect(perCellVolts({ groupIndex: null, volts: 50 }, 2.5)).toBeNull();
	});
});

// Bounds written out by hand from the chemistry table (BU-216 voltages, BU-410 temperature windows):
// NMC full charge 4.20 V → over above 4.25 V; minimum 2.50 V. LFP full charge 3.65 V → over above
// 3.70 V; minimum 2.00 V. Charge window 0–45 °C, discharge window −20–60 °C.
describe('readingProblems', () => {
	const nmc = chemistries.nmc;
	const lfp = chemistries.lfp;

	it.each([
		{ case: 'NMC group at 4.24 V is within range', chem: nmc, reading: { groupIndex: 3, volts: 4.24 }, series: 13, fields: [] },
		{ case: 'NMC group at 4.26 V is over', chem: nmc, reading: { groupIndex: 3, volts: 4.26 }, series: 13, fields: ['volts'] },
		{ case: 'NMC group at 2.49 V is under', chem: nmc, reading: { groupIndex: 3, volts: 2.49 }, series: 13, fields: ['volts'] },
		{ case: 'NMC group at 2.51 V is within range', chem: nmc, reading: { groupIndex: 3, volts: 2.51 }, series: 13, fields: [] },
		// 13 × 4.25 = 55.25: 55.2 V is 4.246 V per cell, 55.3 V is 4.254 V per cell.
		{ case: '13S NMC pack at 55.2 V is within range', chem: nmc, reading: { groupIndex: null, volts: 55.2 }, series: 13, fields: [] },
		{ case: '13S NMC pack at 55.3 V is over', chem: nmc, reading: { groupIndex: null, volts: 55.3 }, series: 13, fields: ['volts'] },
		// A pack reading of 4.26 V would be over for a group, but for 13S it is 0.33 V per cell: under.
		{ case: '13S pack at 4.26 V is far under', chem: nmc, reading: { groupIndex: null, volts: 4.26 }, series: 13, fields: ['volts'] },
		// 16 × 3.70 = 59.2; 16 × 2.00 = 32.0.
		{ case: '16S LFP pack at 58.4 V is within range', chem: lfp, reading: { groupIndex: null, volts: 58.4 }, series: 16, fields: [] },
		{ case: '16S LFP pack at 59.4 V is over', chem: lfp, reading: { groupIndex: null, volts: 59.4 }, series: 16, fields: ['volts'] },
		{ case: '16S LFP pack at 31.8 V is under', chem: lfp, reading: { groupIndex: null, volts: 31.8 }, series: 16, fields: ['volts'] },
		{ case: 'LFP group at 3.75 V is over (NMC would be fine)', chem: lfp, reading: { groupIndex: 1, volts: 3.75 }, series: 4, fields: ['volts'] },
		{ case: 'cell at 44 °C while charging is fine', chem: nmc, reading: { groupIndex: 1, tempC: 44 }, series: 13, fields: [] },
		{ case: 'cell at 46 °C while charging is too warm', chem: nmc, reading: { groupIndex: 1, tempC: 46 }, series: 13, fields: ['tempC'] },
		{ case: 'cell at −1 °C while charging is too cold', chem: nmc, reading: { groupIndex: 1, tempC: -1 }, series: 13, fields: ['tempC'] },
		{ case: 'room at 50 °C', chem: nmc, reading: { groupIndex: null, ambientC: 50 }, series: 13, fields: ['ambientC'] },
		{ case: 'room at 21 °C', chem: nmc, reading: { groupIndex: null, ambientC: 21 }, series: 13, fields: [] },
		{
			case: 'over-voltage and heat at once',
			chem: nmc,
			reading: { groupIndex: 7, volts: 4.31, tempC: 52 },
			series: 13,
			fields: ['volts', 'tempC']
		}
	])('$case', ({ chem, reading, series, fields }) => {
		expect(readingProblems(reading, chem, series).map((p) => p.field)).toEqual(fields);
	});

	it('uses the discharge window (−20–60 °C) when nothing is charging', () => {
		expect(readingProblems({ groupIndex: 1, tempC: 46 }, nmc, 13, { charging: false })).toEqual([]);
		expect(readingProblems({ groupIndex: 1, tempC: -5 }, nmc, 13, { charging: false })).toEqual([]);
		expect(readingProblems({ groupIndex: 1, tempC: 61 }, nmc, 13, { charging: false }).map((p) => p.field)).toEqual(['tempC']);
		expect(readingProblems({ groupIndex: 1, tempC: -21 }, nmc, 13, { charging: false }).map((p) => p.field)).toEqual(['tempC']);
	});

	it('says what was read, the bound, what to do and where the bound comes from', () => {
		const [over] = readingProblems({ groupIndex: null, volts: 55.9 }, nmc, 13);
		// 55.9 ÷ 13 = 4.3 V per cell, above 4.25 V.
		expect(over.message).toContain('55.90 V');
		expect(over.message).toContain('4.300 V per cell over 13 groups');
		expect(over.message).toContain('4.25 V');
		expect(over.message).toMatch(/stop charging now/);
		expect(over.source).toMatch(/maxChargeVolts/);
		const [hot] = readingProblems({ groupIndex: 2, tempC: 47 }, nmc, 13);
		expect(hot.message).toContain('Group 2 is at 47 °C');
		expect(hot.message).toContain('0 °C to 45 °C');
		expect(hot.source).toMatch(/BU-410/);
	});
});
