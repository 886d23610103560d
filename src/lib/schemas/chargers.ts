/**
 * A charger and its channels, as the charger form and the JSON API take them. The ranges are the
 * database's check constraints (src/lib/server/db/schema/chargers.ts), so a valid form always saves.
 */
import { z } from 'zod';
import { lineText, notesText } from './text';

export const chargerKinds = ['bench-supply', 'multi-channel', 'pack-charger'] as const;
export type ChargerKind = (typeof chargerKinds)[number];

export const chargerKindLabels: Record<ChargerKind, string> = {
	'bench-supply': 'Bench supply',
	'multi-channel': 'Multi-channel charger',
	'pack-charger': 'Pack charger'
};

export const chargerKindHints: Record<ChargerKind, string> = {
	'bench-supply': 'A current-limited power supply: you set the voltage and the current.',
	'multi-channel': 'A hobby charger with several isolated outputs, usually with balance leads.',
	'pack-charger': 'A charger made for one pack voltage, such as 54.6 V for 13S.'
};

export const MAX_CHANNELS = 16;

/** A number field that may be left empty: empty means "not fitted" or "the maker does not say". */
const optionalPositive = (what: string, max: number, unit: string) =>
	z
		.number(`${what} must be a number, or left empty.`)
		.positive(`${what} must be more than 0 ${unit}, or left empty.`)
		.max(max, `${what} must be at most ${max} ${unit}.`)
		.nullable()
		.optional();

export const channelSchema = z.object({
	/** Left empty, the channel is called "Channel N" after its place. */
	name: lineText(40, { tooLong: 'Use at most 40 characters for a channel name.' }).default(''),
	maxVolts: z
		.number('Enter the highest voltage this channel gives, in volts.')
		.positive('The maximum voltage must be more than 0 V.')
		.max(1000, 'The maximum voltage must be at most 1000 V.'),
	maxAmps: z
		.number('Enter the highest current this channel gives, in amps.')
		.positive('The maximum current must be more than 0 A.')
		.max(1000, 'The maximum current must be at most 1000 A.'),
	maxWatts: optionalPositive('The power limit', 100_000, 'W'),
	balanceAmps: optionalPositive('The balance current', 50, 'A'),
	maxSeriesCells: z
		.number('The number of cells in series must be a whole number, or left empty.')
		.int('The number of cells in series must be a whole number.')
		.min(1, 'The number of cells in series must be at least 1, or left empty.')
		.max(400, 'The number of cells in series must be at most 400.')
		.nullable()
		.optional()
});
export type ChannelInput = z.infer<typeof channelSchema>;

export const chargerSchema = z.object({
	name: lineText(80, { required: 'Name the charger.' }),
	kind: z.enum(chargerKinds, 'Choose what kind of charger it is.'),
	notes: notesText(2000, { tooLong: 'Keep the notes under 2000 characters.' }).default(''),
	channels: z
		.array(channelSchema, 'Add at least one channel.')
		.min(1, 'Add at least one channel.')
		.max(MAX_CHANNELS, `A charger can have at most ${MAX_CHANNELS} channels here.`)
});
export type ChargerInput = z.infer<typeof chargerSchema>;

/** A blank channel row for the form. */
export function blankChannel(position: number): ChannelInput {
	return {
		name: `Channel ${position}`,
		maxVolts: undefined as unknown as number,
		maxAmps: undefined as unknown as number,
		maxWatts: null,
		balanceAmps: null,
		maxSeriesCells: null
	};
}
