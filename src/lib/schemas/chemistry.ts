/**
 * A workshop's own chemistry profile, as the profile form takes it. The ranges are the database's
 * check constraints (src/lib/server/db/schema/packs.ts). State of charge is in percent here, as
 * datasheets print it; the database and the engine keep it as 0..1.
 */
import { z } from 'zod';
import { lineText, notesText } from './text';

export const chemistryFamilies = ['li-ion', 'lfp', 'lto'] as const;
export type ChemistryFamilyInput = (typeof chemistryFamilies)[number];

export const chemistryFamilyLabels: Record<ChemistryFamilyInput, string> = {
	'li-ion': 'Li-ion, 4.2 V family (NMC, NCA, LCO, LMO)',
	lfp: 'LFP (lithium iron phosphate)',
	lto: 'LTO (lithium titanate)'
};

const volts = (what: string) =>
	z
		.number(`Enter the ${what} in volts.`)
		.positive(`The ${what} must be more than 0 V.`)
		.max(5, `The ${what} must be at most 5 V per cell.`);

const celsius = (what: string) =>
	z
		.number(`Enter the ${what} in °C.`)
		.min(-40, `The ${what} must be −40 °C or warmer.`)
		.max(100, `The ${what} must be 100 °C or cooler.`);

export const restPointSchema = z.object({
	socPercent: z
		.number('Enter the state of charge in percent.')
		.min(0, 'State of charge is 0 % or more.')
		.max(100, 'State of charge is 100 % or less.'),
	volts: volts('rest voltage')
});
export type RestPointInput = z.infer<typeof restPointSchema>;

export const MAX_REST_POINTS = 60;

export const chemistryProfileSchema = z
	.object({
		name: lineText(80, { required: 'Name the profile, for example after the cell it comes from.' }),
		family: z.enum(chemistryFamilies, 'Choose the family.'),
		minVolts: volts('absolute minimum voltage'),
		fullDischargeVolts: volts('discharge cut-off voltage'),
		nominalVolts: volts('nominal voltage'),
		maxChargeVolts: volts('maximum charge voltage'),
		storageVolts: volts('storage voltage'),
		chargeTempMinC: celsius('lowest charging temperature'),
		chargeTempMaxC: celsius('highest charging temperature'),
		dischargeTempMinC: celsius('lowest discharge temperature'),
		dischargeTempMaxC: celsius('highest discharge temperature'),
		defaultChargeC: z
			.number('Enter the datasheet’s standard charge rate in C.')
			.positive('The charge rate must be more than 0 C.')
			.max(20, 'The charge rate must be at most 20 C.'),
		terminationC: z
			.number('Enter the termination current in C.')
			.positive('The termination current must be more than 0 C.')
			.lt(1, 'The termination current must be below 1 C.'),
		cvShareAt1C: z
			.number('Enter the share of the charge that goes in during CV at 1C, from 0 to 0.99.')
			.min(0, 'The CV share must be 0 or more.')
			.lt(1, 'The CV share must be below 1.'),
		restCurve: z
			.array(restPointSchema, 'Add the rest-voltage points.')
			.min(2, 'The rest-voltage table needs at least two points.')
			.max(MAX_REST_POINTS, `Use at most ${MAX_REST_POINTS} rest-voltage points.`),
		source: notesText(500, { tooLong: 'Keep the source under 500 characters.' }).default(''),
		/** Ticked when the profile charges past its family's usual limits (beyondUsualLimits, chemistry-form.ts). */
		datasheetAllows: z.boolean().optional()
	})
	.superRefine((p, ctx) => {
		const problem = (path: (string | number)[], message: string) => ctx.addIssue({ code: 'custom', path, message });
		if (p.fullDischargeVolts < p.minVolts) {
			problem(['fullDischargeVolts'], 'The discharge cut-off cannot be below the absolute minimum voltage.');
		}
		if (p.nominalVolts <= p.fullDischargeVolts) {
			problem(['nominalVolts'], 'The nominal voltage must be above the discharge cut-off.');
		}
		if (p.maxChargeVolts <= p.nominalVolts) {
			problem(['maxChargeVolts'], 'The maximum charge voltage must be above the nominal voltage.');
		}
		if (p.storageVolts < p.fullDischargeVolts || p.storageVolts > p.maxChargeVolts) {
			problem(['storageVolts'], 'The storage voltage must lie between the discharge cut-off and the maximum charge voltage.');
		}
		if (p.chargeTempMaxC <= p.chargeTempMinC) {
			problem(['chargeTempMaxC'], 'The highest charging temperature must be above the lowest.');
		}
		if (p.dischargeTempMaxC <= p.dischargeTempMinC) {
			problem(['dischargeTempMaxC'], 'The highest discharge temperature must be above the lowest.');
		}
		p.restCurve.forEach((point, i) => {
			if (i === 0) return;
			const before = p.restCurve[i - 1];
			if (point.socPercent <= before.socPercent) {
				problem(['restCurve', i, 'socPercent'], `Row ${i + 1}: the state of charge must be higher than in row ${i}.`);
			}
			if (point.volts < before.volts) {
				problem(['restCurve', i, 'volts'], `Row ${i + 1}: the voltage must not be lower than in row ${i}.`);
			}
		});
		const first = p.restCurve[0];
		const last = p.restCurve[p.restCurve.length - 1];
		if (first && last && p.restCurve.length >= 2 && last.volts <= first.volts) {
			problem(['restCurve'], 'The rest voltage must rise from the first row to the last.');
		}
	});
export type ChemistryProfileInput = z.infer<typeof chemistryProfileSchema>;

/** Percent (form) → fraction (engine, database), rounded so 0.33 % stays 0.0033. */
export const socFromPercent = (percent: number) => Math.round(percent * 1e4) / 1e6;
/** Fraction → percent, without floating-point noise such as 32.999999. */
export const percentFromSoc = (soc: number) => Math.round(soc * 1e6) / 1e4;
