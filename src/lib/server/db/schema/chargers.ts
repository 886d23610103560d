/** The workshop's charging equipment and its channels. */
import { sql } from 'drizzle-orm';
import { check, doublePrecision, index, integer, pgEnum, pgTable, text, uniqueIndex } from 'drizzle-orm/pg-core';
import { workshops } from './accounts';
import { audit } from './packs';

export const chargerKindEnum = pgEnum('charger_kind', ['bench-supply', 'multi-channel', 'pack-charger']);

export const chargers = pgTable(
	'chargers',
	{
		id: text('id').primaryKey(),
		workshopId: text('workshop_id')
			.notNull()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		name: text('name').notNull(),
		kind: chargerKindEnum('kind').notNull(),
		notes: text('notes').notNull().default(''),
		...audit()
	},
	(t) => [
		uniqueIndex('chargers_workshop_name_key').on(t.workshopId, t.name),
		// The lengths of chargerSchema (src/lib/schemas/chargers.ts).
		check('chargers_text_lengths', sql`char_length(${t.name}) between 1 and 80 and char_length(${t.notes}) <= 2000`)
	]
);
export type Charger = typeof chargers.$inferSelect;

/** An isolated output of a charger, with its limits. */
export const chargerChannels = pgTable(
	'charger_channels',
	{
		id: text('id').primaryKey(),
		chargerId: text('charger_id')
			.notNull()
			.references(() => chargers.id, { onDelete: 'cascade' }),
		position: integer('position').notNull(),
		name: text('name').notNull(),
		maxVolts: doublePrecision('max_volts').notNull(),
		maxAmps: doublePrecision('max_amps').notNull(),
		maxWatts: doublePrecision('max_watts'),
		balanceAmps: doublePrecision('balance_amps'),
		maxSeriesCells: integer('max_series_cells')
	},
	(t) => [
		uniqueIndex('charger_channels_position_key').on(t.chargerId, t.position),
		index('charger_channels_charger_idx').on(t.chargerId),
		// The ranges of channelSchema (src/lib/schemas/chargers.ts).
		check('charger_channels_limits', sql`${t.maxVolts} > 0 and ${t.maxVolts} <= 1000 and ${t.maxAmps} > 0 and ${t.maxAmps} <= 1000`),
		check('charger_channels_watts', sql`${t.maxWatts} is null or (${t.maxWatts} > 0 and ${t.maxWatts} <= 100000)`),
		check('charger_channels_balance', sql`${t.balanceAmps} is null or (${t.balanceAmps} > 0 and ${t.balanceAmps} <= 50)`),
		check('charger_channels_name_length', sql`char_length(${t.name}) <= 40`),
		check('charger_channels_position', sql`${t.position} between 1 and 16`),
		check('charger_channels_series', sql`${t.maxSeriesCells} is null or ${t.maxSeriesCells} between 1 and 400`)
	]
);
export type ChargerChannel = typeof chargerChannels.$inferSelect;
