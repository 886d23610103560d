/** The builder's records: chemistry profiles, cell specs, packs, groups, cells, attachments. */
import { sql } from 'drizzle-orm';
import {
	bigint,
	boolean,
	check,
	doublePrecision,
	foreignKey,
	index,
	integer,
	jsonb,
	pgEnum,
	pgTable,
	text,
	timestamp,
	unique,
	uniqueIndex
} from 'drizzle-orm/pg-core';
import { users, workshops } from './accounts';

const at = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

/** Who made a record and who changed it last, and when (every change records both). */
export const audit = () => ({
	createdBy: text('created_by').references(() => users.id, { onDelete: 'set null' }),
	createdAt: at('created_at').notNull().defaultNow(),
	updatedBy: text('updated_by').references(() => users.id, { onDelete: 'set null' }),
	updatedAt: at('updated_at').notNull().defaultNow()
});

const workshopRef = () =>
	text('workshop_id')
		.notNull()
		.references(() => workshops.id, { onDelete: 'cascade' });

export const chemistryFamilyEnum = pgEnum('chemistry_family', ['li-ion', 'lfp', 'lto']);

/** A workshop's own chemistry, made from a cell's datasheet (the built-ins live in the engine). */
export const chemistryProfiles = pgTable(
	'chemistry_profiles',
	{
		id: text('id').primaryKey(),
		workshopId: workshopRef(),
		name: text('name').notNull(),
		family: chemistryFamilyEnum('family').notNull(),
		nominalVolts: doublePrecision('nominal_volts').notNull(),
		maxChargeVolts: doublePrecision('max_charge_volts').notNull(),
		fullDischargeVolts: doublePrecision('full_discharge_volts').notNull(),
		minVolts: doublePrecision('min_volts').notNull(),
		storageVolts: doublePrecision('storage_volts').notNull(),
		chargeTempMinC: doublePrecision('charge_temp_min_c').notNull(),
		chargeTempMaxC: doublePrecision('charge_temp_max_c').notNull(),
		dischargeTempMinC: doublePrecision('discharge_temp_min_c').notNull(),
		dischargeTempMaxC: doublePrecision('discharge_temp_max_c').notNull(),
		defaultChargeC: doublePrecision('default_charge_c').notNull(),
		terminationC: doublePrecision('termination_c').notNull(),
		cvShareAt1C: doublePrecision('cv_share_at_1c').notNull(),
		/** [soc 0..1, volts][], soc ascending. */
		restCurve: jsonb('rest_curve').$type<[number, number][]>().notNull(),
		source: text('source').notNull().default(''),
		...audit()
	},
	(t) => [
		uniqueIndex('chemistry_profiles_workshop_name_key').on(t.workshopId, t.name),
		// Target of cell_specs' same-workshop key.
		unique('chemistry_profiles_id_workshop_key').on(t.id, t.workshopId),
		check('chemistry_profiles_name_length', sql`char_length(${t.name}) between 1 and 80`),
		check('chemistry_profiles_source_length', sql`char_length(${t.source}) <= 500`),
		check('chemistry_profiles_discharge_temps', sql`${t.dischargeTempMinC} >= -40 and ${t.dischargeTempMaxC} <= 100`),
		check('chemistry_profiles_rest_curve', sql`jsonb_typeof(${t.restCurve}) = 'array' and jsonb_array_length(${t.restCurve}) between 2 and 60`),
		check(
			'chemistry_profiles_volts_order',
			sql`0 < ${t.minVolts} and ${t.minVolts} <= ${t.fullDischargeVolts} and ${t.fullDischargeVolts} < ${t.nominalVolts} and ${t.nominalVolts} < ${t.maxChargeVolts} and ${t.maxChargeVolts} <= 5`
		),
		check('chemistry_profiles_storage', sql`${t.storageVolts} between ${t.fullDischargeVolts} and ${t.maxChargeVolts}`),
		check('chemistry_profiles_temps', sql`${t.chargeTempMinC} < ${t.chargeTempMaxC} and ${t.dischargeTempMinC} < ${t.dischargeTempMaxC} and ${t.chargeTempMinC} >= -40 and ${t.chargeTempMaxC} <= 100`),
		check('chemistry_profiles_rates', sql`${t.defaultChargeC} > 0 and ${t.defaultChargeC} <= 20 and ${t.terminationC} > 0 and ${t.terminationC} < 1 and ${t.cvShareAt1C} >= 0 and ${t.cvShareAt1C} < 1`)
	]
);
export type ChemistryProfile = typeof chemistryProfiles.$inferSelect;

export const cellSpecs = pgTable(
	'cell_specs',
	{
		id: text('id').primaryKey(),
		workshopId: workshopRef(),
		name: text('name').notNull(),
		/** A built-in chemistry id of the engine (nmc, nca, lco, lmo, lfp, lto)… */
		chemistryId: text('chemistry_id'),
		/** …or one of the workshop's own profiles: exactly one of the two. */
		/** Same workshop as the spec: see the composite key below. */
		chemistryProfileId: text('chemistry_profile_id'),
		capacityAh: doublePrecision('capacity_ah').notNull(),
		maxContinuousAmps: doublePrecision('max_continuous_amps').notNull(),
		maxBurstAmps: doublePrecision('max_burst_amps'),
		/** How long the cell may give maxBurstAmps, in seconds, as its datasheet says. */
		maxBurstSeconds: integer('max_burst_seconds'),
		maxChargeAmps: doublePrecision('max_charge_amps').notNull(),
		resistanceMilliOhms: doublePrecision('resistance_milliohms'),
		...audit()
	},
	(t) => [
		uniqueIndex('cell_specs_workshop_name_key').on(t.workshopId, t.name),
		// Target of packs' same-workshop key.
		unique('cell_specs_id_workshop_key').on(t.id, t.workshopId),
		// A workshop's own profile only (null for a built-in chemistry: MATCH SIMPLE skips the check).
		foreignKey({
			name: 'cell_specs_profile_same_workshop_fk',
			columns: [t.chemistryProfileId, t.workshopId],
			foreignColumns: [chemistryProfiles.id, chemistryProfiles.workshopId]
		}).onDelete('restrict'),
		check('cell_specs_name_length', sql`char_length(${t.name}) between 1 and 80`),
		check('cell_specs_one_chemistry', sql`(${t.chemistryId} is null) <> (${t.chemistryProfileId} is null)`),
		check('cell_specs_builtin', sql`${t.chemistryId} is null or ${t.chemistryId} in ('nmc','nca','lco','lmo','lfp','lto')`),
		// The ranges of cellSpecSchema (src/lib/schemas/packs.ts).
		check('cell_specs_capacity', sql`${t.capacityAh} > 0 and ${t.capacityAh} <= 2000`),
		check(
			'cell_specs_currents',
			sql`${t.maxContinuousAmps} > 0 and ${t.maxContinuousAmps} <= 5000 and ${t.maxChargeAmps} > 0 and ${t.maxChargeAmps} <= 5000 and (${t.maxBurstAmps} is null or (${t.maxBurstAmps} >= ${t.maxContinuousAmps} and ${t.maxBurstAmps} <= 10000))`
		),
		check('cell_specs_burst_seconds', sql`${t.maxBurstSeconds} is null or ${t.maxBurstSeconds} between 1 and 3600`),
		check('cell_specs_resistance', sql`${t.resistanceMilliOhms} is null or (${t.resistanceMilliOhms} > 0 and ${t.resistanceMilliOhms} <= 10000)`)
	]
);
export type CellSpec = typeof cellSpecs.$inferSelect;

export const packStatusEnum = pgEnum('pack_status', ['planning', 'building', 'in-service', 'retired']);

export const packs = pgTable(
	'packs',
	{
		id: text('id').primaryKey(),
		workshopId: workshopRef(),
		name: text('name').notNull(),
		/** Same workshop as the pack: see the composite key below. */
		cellSpecId: text('cell_spec_id').notNull(),
		series: integer('series').notNull(),
		parallel: integer('parallel').notNull(),
		bmsFitted: boolean('bms_fitted').notNull().default(false),
		bmsBalanceAmps: doublePrecision('bms_balance_amps'),
		status: packStatusEnum('status').notNull().default('planning'),
		/** The member whose pack it is (often a viewer). */
		// Also (workshop_id, pack_owner_id) → memberships ON DELETE SET NULL (pack_owner_id), written
		// by hand in drizzle/0003_pack-owner-is-member.sql: a pack owner is always a member.
		packOwnerId: text('pack_owner_id').references(() => users.id, { onDelete: 'set null' }),
		measuredPeakAmps: doublePrecision('measured_peak_amps'),
		measuredPeakNote: text('measured_peak_note').notNull().default(''),
		notes: text('notes').notNull().default(''),
		...audit()
	},
	(t) => [
		index('packs_workshop_idx').on(t.workshopId),
		// Target of charge_sessions' same-workshop key.
		unique('packs_id_workshop_key').on(t.id, t.workshopId),
		foreignKey({
			name: 'packs_cell_spec_same_workshop_fk',
			columns: [t.cellSpecId, t.workshopId],
			foreignColumns: [cellSpecs.id, cellSpecs.workshopId]
		}).onDelete('restrict'),
		// The ranges of packSchema (src/lib/schemas/packs.ts).
		check('packs_topology', sql`${t.series} between 1 and 400 and ${t.parallel} between 1 and 200`),
		check('packs_balance', sql`${t.bmsBalanceAmps} is null or (${t.bmsBalanceAmps} > 0 and ${t.bmsBalanceAmps} <= 50)`),
		check('packs_peak', sql`${t.measuredPeakAmps} is null or (${t.measuredPeakAmps} >= 0 and ${t.measuredPeakAmps} <= 100000)`),
		check(
			'packs_text_lengths',
			sql`char_length(${t.name}) between 1 and 80 and char_length(${t.measuredPeakNote}) <= 500 and char_length(${t.notes}) <= 5000`
		)
	]
);
export type Pack = typeof packs.$inferSelect;

/** Groups 1..S of a pack: what readings and alerts will refer to. */
export const packGroups = pgTable(
	'pack_groups',
	{
		id: text('id').primaryKey(),
		packId: text('pack_id')
			.notNull()
			.references(() => packs.id, { onDelete: 'cascade' }),
		index: integer('index').notNull()
	},
	(t) => [
		uniqueIndex('pack_groups_pack_index_key').on(t.packId, t.index),
		// Target of cells' same-pack key.
		unique('pack_groups_id_pack_key').on(t.id, t.packId),
		check('pack_groups_index', sql`${t.index} between 1 and 400`)
	]
);
export type PackGroup = typeof packGroups.$inferSelect;

export const cellPlacementEnum = pgEnum('cell_placement', ['unsorted', 'group', 'spare', 'rejected']);

/** One cell of a pack's batch, with what was measured on arrival. */
export const cells = pgTable(
	'cells',
	{
		id: text('id').primaryKey(),
		packId: text('pack_id')
			.notNull()
			.references(() => packs.id, { onDelete: 'cascade' }),
		label: text('label').notNull(),
		arrivalVolts: doublePrecision('arrival_volts').notNull(),
		resistanceMilliOhms: doublePrecision('resistance_milliohms'),
		capacityAh: doublePrecision('capacity_ah'),
		placement: cellPlacementEnum('placement').notNull().default('unsorted'),
		/**
		 * A group of the same pack (composite key below). No "on delete set null": a placed cell
		 * must keep its group (cells_group_placement), so a group is removed only once it is empty.
		 */
		groupId: text('group_id'),
		...audit()
	},
	(t) => [
		// Labels differ regardless of case within a batch, as cellLabelKey says.
		uniqueIndex('cells_pack_label_lower_key').on(t.packId, sql`lower(${t.label})`),
		// Target of voltage_checks' same-pack key.
		unique('cells_id_pack_key').on(t.id, t.packId),
		index('cells_group_idx').on(t.groupId),
		foreignKey({
			name: 'cells_group_same_pack_fk',
			columns: [t.groupId, t.packId],
			foreignColumns: [packGroups.id, packGroups.packId]
		}),
		check('cells_volts', sql`${t.arrivalVolts} >= 0 and ${t.arrivalVolts} <= 5`),
		check('cells_resistance', sql`${t.resistanceMilliOhms} is null or (${t.resistanceMilliOhms} > 0 and ${t.resistanceMilliOhms} <= 10000)`),
		check('cells_capacity', sql`${t.capacityAh} is null or (${t.capacityAh} > 0 and ${t.capacityAh} <= 2000)`),
		check('cells_group_placement', sql`(${t.placement} = 'group') = (${t.groupId} is not null)`),
		check('cells_label', sql`char_length(${t.label}) between 1 and 60`)
	]
);
export type Cell = typeof cells.$inferSelect;

/** Photos and datasheets on a pack; the file itself lives under the data folder. */
export const attachments = pgTable(
	'attachments',
	{
		id: text('id').primaryKey(),
		packId: text('pack_id')
			.notNull()
			.references(() => packs.id, { onDelete: 'cascade' }),
		fileName: text('file_name').notNull(),
		contentType: text('content_type').notNull(),
		sizeBytes: bigint('size_bytes', { mode: 'number' }).notNull(),
		/** Random name under CELLSITTER_DATA_DIR/attachments/. */
		storedName: text('stored_name').notNull(),
		thumbnailName: text('thumbnail_name'),
		uploadedBy: text('uploaded_by').references(() => users.id, { onDelete: 'set null' }),
		createdAt: at('created_at').notNull().defaultNow()
	},
	(t) => [
		index('attachments_pack_idx').on(t.packId),
		check('attachments_size', sql`${t.sizeBytes} > 0 and ${t.sizeBytes} <= 10485760`),
		check('attachments_type', sql`${t.contentType} in ('image/jpeg','image/png','image/webp','image/heic','application/pdf')`)
	]
);
export type Attachment = typeof attachments.$inferSelect;
