import { z } from 'zod';

const chemistryIds = ['nmc', 'nca', 'lco', 'lmo', 'lfp', 'lto'] as const;

/** An optional number: null when not given (an empty form field). */
const optionalPositive = (what: string, max: number) =>
	z
		.number(`${what} must be a number.`)
		.gt(0, `${what} must be more than 0.`)
		.max(max, `${what} must be at most ${max}.`)
		.nullable()
		.default(null);

const positive = (what: string, max: number) =>
	z
		.number(`${what} must be a number.`)
		.gt(0, `${what} must be more than 0.`)
		.max(max, `${what} must be at most ${max}.`);

export const cellSpecSchema = z
	.object({
		name: z.string().trim().min(1, 'Name the cell spec.').max(80, 'Use at most 80 characters.'),
		/** `builtin:nmc` or `profile:<id>`: one select for both kinds of chemistry. */
		chemistry: z
			.string()
			.regex(/^(builtin:(nmc|nca|lco|lmo|lfp|lto)|profile:[a-z2-7]{24})$/, 'Choose a chemistry.'),
		capacityAh: positive('Capacity', 2000),
		maxContinuousAmps: positive('Continuous discharge current', 5000),
		maxBurstAmps: optionalPositive('Burst discharge current', 10000),
		maxChargeAmps: positive('Charge current', 5000),
		resistanceMilliOhms: optionalPositive('Resistance', 10000)
	})
	.refine((v) => v.maxBurstAmps === null || v.maxBurstAmps >= v.maxContinuousAmps, {
		message: 'Burst current cannot be below the continuous current.',
		path: ['maxBurstAmps']
	});
export type CellSpecInput = z.output<typeof cellSpecSchema>;

export function parseChemistryChoice(value: string) {
	const [kind, id] = value.split(':');
	return kind === 'builtin'
		? { chemistryId: id as (typeof chemistryIds)[number], chemistryProfileId: null }
		: { chemistryId: null, chemistryProfileId: id };
}

export const packStatuses = ['planning', 'building', 'in-service', 'retired'] as const;
export const packStatusLabels: Record<(typeof packStatuses)[number], string> = {
	planning: 'Planning',
	building: 'Building',
	'in-service': 'In service',
	retired: 'Retired'
};

const packFields = {
	name: z.string().trim().min(1, 'Name the pack.').max(80, 'Use at most 80 characters.'),
	cellSpecId: z.string().regex(/^[a-z2-7]{24}$/, 'Choose a cell spec.'),
	series: z
		.number('Groups in series must be a whole number.')
		.int('Groups in series must be a whole number.')
		.min(1, 'A pack has at least 1 group.')
		.max(400, 'At most 400 groups in series.'),
	parallel: z
		.number('Cells per group must be a whole number.')
		.int('Cells per group must be a whole number.')
		.min(1, 'A group has at least 1 cell.')
		.max(200, 'At most 200 cells per group.'),
	bmsFitted: z.boolean().default(false),
	bmsBalanceAmps: optionalPositive('Balance current', 50),
	status: z.enum(packStatuses).default('planning'),
	/** A member's user id, or '' for none. */
	packOwnerId: z.string().default(''),
	measuredPeakAmps: z
		.number('The measured peak must be a number.')
		.min(0, 'The measured peak must be 0 A or more.')
		.max(100000, 'The measured peak must be at most 100000 A.')
		.nullable()
		.default(null),
	measuredPeakNote: z.string().trim().max(500, 'Use at most 500 characters.').default(''),
	notes: z.string().trim().max(5000, 'Use at most 5000 characters.').default('')
};

export const packSchema = z.object(packFields);
export type PackInput = z.output<typeof packSchema>;

/** PATCH: any subset of the pack's fields. */
export const packPatchSchema = z.object(packFields).partial();

export const matchingProposalSchema = z.object({ includeSuspect: z.boolean().default(false) });

export const matchingAcceptSchema = z.object({
	/** Cell ids per group, group 1 first. */
	groups: z.array(z.array(z.string().min(1)).min(1)).min(1),
	/** Replace an assignment that is already saved (the page asks first). */
	replace: z.boolean().default(false)
});
