import { z } from 'zod';
import { lineText, notesText } from './text';

/** A record id as newId() makes them (src/params/id.ts): anything else never reaches a query. */
export const recordId = (message: string) => z.string().regex(/^[a-z2-7]{24}$/, message);

const chemistryIds = ['nmc', 'nca', 'lco', 'lmo', 'lfp', 'lto'] as const;

/** An optional number: null when not given (an empty form field). */
const optionalPositive = (what: string, max: number) =>
	z
		.number(`${what} must be a number.`)
		.gt(0, `${what} must be more than 0.`)
		.max(max, `${what} must be at most ${max}.`)
		.nullable();

const positive = (what: string, max: number) =>
	z
		.number(`${what} must be a number.`)
		.gt(0, `${what} must be more than 0.`)
		.max(max, `${what} must be at most ${max}.`);

export const cellSpecSchema = z
	.object({
		name: lineText(80, { required: 'Name the cell spec.' }),
		/** `builtin:nmc` or `profile:<id>`: one select for both kinds of chemistry. */
		chemistry: z
			.string()
			.regex(/^(builtin:(nmc|nca|lco|lmo|lfp|lto)|profile:[a-z2-7]{24})$/, 'Choose a chemistry.'),
		capacityAh: positive('Capacity', 2000),
		maxContinuousAmps: positive('Continuous discharge current', 5000),
		maxBurstAmps: optionalPositive('Burst discharge current', 10000).default(null),
		/** How long the maker allows the burst current, seconds: 1 s to an hour, as the database checks. */
		maxBurstSeconds: z
			.number('The burst duration must be a whole number of seconds, or left empty.')
			.int('The burst duration must be a whole number of seconds.')
			.min(1, 'The burst duration must be at least 1 s.')
			.max(3600, 'The burst duration must be at most 3600 s (one hour).')
			.nullable()
			.optional(),
		maxChargeAmps: positive('Charge current', 5000),
		resistanceMilliOhms: optionalPositive('Resistance', 10000).default(null)
	})
	.refine((v) => v.maxBurstAmps === null || v.maxBurstAmps >= v.maxContinuousAmps, {
		message: 'Burst current cannot be below the continuous current.',
		path: ['maxBurstAmps']
	})
	.refine((v) => v.maxBurstSeconds == null || v.maxBurstAmps !== null, {
		message: 'Give the burst current too, or leave the duration empty.',
		path: ['maxBurstSeconds']
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

/**
 * The pack's fields without defaults: a PATCH takes any subset of them, and zod 4's `.partial()`
 * would still fill in every `.default()` left out (stack.md, pitfall 15), resetting status, pack
 * owner, BMS and notes of a pack whenever one other field was sent.
 */
const packFields = {
	name: lineText(80, { required: 'Name the pack.' }),
	cellSpecId: recordId('Choose a cell spec.'),
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
	bmsFitted: z.boolean('Say whether a BMS is fitted.'),
	bmsBalanceAmps: optionalPositive('Balance current', 50),
	status: z.enum(packStatuses, 'Choose a status.'),
	/** A member's user id, or '' for none. */
	packOwnerId: z.union([z.literal(''), recordId('Choose a member of this workshop as pack owner.')], 'Choose a member of this workshop as pack owner.'),
	measuredPeakAmps: z
		.number('The measured peak must be a number.')
		.min(0, 'The measured peak must be 0 A or more.')
		.max(100000, 'The measured peak must be at most 100000 A.')
		.nullable(),
	measuredPeakNote: lineText(500),
	notes: notesText(5000)
};

/** A new pack, or the whole edit form: what is left out takes its default. */
export const packSchema = z.object({
	...packFields,
	bmsFitted: packFields.bmsFitted.default(false),
	bmsBalanceAmps: packFields.bmsBalanceAmps.default(null),
	status: packFields.status.default('planning'),
	packOwnerId: packFields.packOwnerId.default(''),
	measuredPeakAmps: packFields.measuredPeakAmps.default(null),
	measuredPeakNote: packFields.measuredPeakNote.default(''),
	notes: packFields.notes.default('')
});
export type PackInput = z.output<typeof packSchema>;

/** PATCH: any subset of the pack's fields; only the keys sent change (no defaults here). */
export const packPatchSchema = z.object(packFields).partial();

export const matchingProposalSchema = z.object({ includeSuspect: z.boolean().default(false) });

export const matchingAcceptSchema = z.object({
	/** Cell ids per group, group 1 first. */
	groups: z.array(z.array(recordId('A cell id is not valid; reload the page and try again.')).min(1)).min(1),
	/** Replace an assignment that is already saved (the page asks first). */
	replace: z.boolean().default(false),
	/** The batch version the proposal (or the page) was made from: a batch changed since is a 409. */
	version: z.string().regex(/^[A-Za-z0-9_-]{1,64}$/, 'The assignment version is not valid; propose again.').optional()
});
