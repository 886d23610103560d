/**
 * Self-discharge checks: a loose cell's (or a built pack's group's) volts re-measured at rest some
 * days after an earlier measure (the cell's arrival measure, or an earlier check). One table for
 * both: each row names exactly one cell or one group of the same pack (composite keys below).
 */
import { sql } from 'drizzle-orm';
import { check, doublePrecision, foreignKey, index, pgTable, text, timestamp } from 'drizzle-orm/pg-core';
import { users, workshops } from './accounts';
import { cells, packGroups, packs } from './packs';

const at = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

export const voltageChecks = pgTable(
	'voltage_checks',
	{
		id: text('id').primaryKey(),
		workshopId: text('workshop_id')
			.notNull()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		/** Same workshop as the check (composite key below). */
		packId: text('pack_id').notNull(),
		/** A cell of the same pack, or null for a group's check. */
		cellId: text('cell_id'),
		/** A group of the same pack (volts per cell: its cells are in parallel), or null for a cell's check. */
		groupId: text('group_id'),
		volts: doublePrecision('volts').notNull(),
		/** When the volts were read at the bench (the person may enter it later). */
		measuredAt: at('measured_at').notNull(),
		enteredBy: text('entered_by').references(() => users.id, { onDelete: 'set null' }),
		createdAt: at('created_at').notNull().defaultNow()
	},
	(t) => [
		index('voltage_checks_pack_measured_idx').on(t.packId, t.measuredAt),
		index('voltage_checks_cell_idx').on(t.cellId),
		index('voltage_checks_group_idx').on(t.groupId),
		foreignKey({
			name: 'voltage_checks_pack_same_workshop_fk',
			columns: [t.packId, t.workshopId],
			foreignColumns: [packs.id, packs.workshopId]
		}).onDelete('cascade'),
		foreignKey({
			name: 'voltage_checks_cell_same_pack_fk',
			columns: [t.cellId, t.packId],
			foreignColumns: [cells.id, cells.packId]
		}).onDelete('cascade'),
		foreignKey({
			name: 'voltage_checks_group_same_pack_fk',
			columns: [t.groupId, t.packId],
			foreignColumns: [packGroups.id, packGroups.packId]
		}).onDelete('cascade'),
		check('voltage_checks_one_target', sql`(${t.cellId} is null) <> (${t.groupId} is null)`),
		// The range of voltageCheckSchema (src/lib/schemas/self-discharge.ts), like cells.arrival_volts.
		check('voltage_checks_volts', sql`${t.volts} >= 0 and ${t.volts} <= 5`)
	]
);
export type VoltageCheck = typeof voltageChecks.$inferSelect;
