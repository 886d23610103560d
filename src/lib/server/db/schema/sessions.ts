/**
 * Charge sessions: the plan (steps), the run (status, technician on watch), the readings, the
 * device tokens that let a data logger post readings, and the audit trail of every change.
 */
import { sql } from 'drizzle-orm';
import {
	bigint,
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
import { chargers } from './chargers';
import { audit, packGroups, packs } from './packs';

const at = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

export const sessionKindEnum = pgEnum('session_kind', [
	'one-at-a-time',
	'channels',
	'bulk-top-up',
	'bulk-bms',
	'bleed',
	'rest-check'
]);
export const sessionTargetEnum = pgEnum('session_target', ['full', 'storage', 'volts']);
export const sessionStatusEnum = pgEnum('session_status', ['draft', 'planned', 'running', 'paused', 'done', 'stopped']);
export const stepStatusEnum = pgEnum('step_status', ['waiting', 'running', 'done', 'skipped']);
export const readingSourceEnum = pgEnum('reading_source', ['hand', 'file', 'device']);

/** Daily hands-on hours in the workshop's zone, and one-off windows (a night watch). */
export type StoredHandsOn = {
	daily: { from: string; to: string }[];
	once: { start: string; end: string }[];
};

export const chargeSessions = pgTable(
	'charge_sessions',
	{
		id: text('id').primaryKey(),
		workshopId: text('workshop_id')
			.notNull()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		/** Same workshop as the session (composite key below); a pack with sessions is never deleted with them. */
		packId: text('pack_id').notNull(),
		name: text('name').notNull().default(''),
		kind: sessionKindEnum('kind').notNull(),
		target: sessionTargetEnum('target').notNull().default('full'),
		/** Rest volts per cell for target 'volts' (and a bleed's target). */
		targetVolts: doublePrecision('target_volts'),
		/** Set volts per cell the plan charges to (null for a bleed or a rest check). */
		setVolts: doublePrecision('set_volts'),
		/** Requested amps per step (capped by channel and group rating). */
		amps: doublePrecision('amps'),
		chargerId: text('charger_id').references(() => chargers.id, { onDelete: 'set null' }),
		/** Channels of that charger the plan may use, by id. */
		channelIds: jsonb('channel_ids').$type<string[]>().notNull().default([]),
		/** Bulk: the channel for the one-at-a-time top-up after the pack charge. */
		topUpChannelId: text('top_up_channel_id'),
		/** Bleed: a resistor in ohms or a constant load in amps per group. */
		bleedLoad: jsonb('bleed_load').$type<{ ohms: number } | { amps: number } | null>(),
		/** Rest check: how long the pack rests, in hours. */
		restHours: doublePrecision('rest_hours'),
		swapMinutes: integer('swap_minutes').notNull().default(5),
		plannedStart: at('planned_start').notNull(),
		handsOn: jsonb('hands_on').$type<StoredHandsOn>().notNull(),
		readingIntervalMinutes: integer('reading_interval_minutes').notNull().default(60),
		/** The engine's Limits, tightened or (with confirmation) loosened by the planner. */
		limits: jsonb('limits').$type<Record<string, number>>().notNull(),
		/** What the planner confirmed when loosening a limit past the defaults (the datasheet value). */
		limitsConfirmation: text('limits_confirmation').notNull().default(''),
		/** The groups' start state the plan used: group id → rest volts per cell. */
		startVolts: jsonb('start_volts').$type<Record<string, number>>().notNull().default({}),
		/** The server's plan summary (total hours, lower bound, warnings, bulk details). */
		planSummary: jsonb('plan_summary').$type<Record<string, unknown>>().notNull().default({}),
		plannedEnd: at('planned_end'),
		/** The technician on watch: a member of the workshop (hand-written key in the migration). */
		watchUserId: text('watch_user_id').references(() => users.id, { onDelete: 'set null' }),
		status: sessionStatusEnum('status').notNull().default('planned'),
		stopReason: text('stop_reason').notNull().default(''),
		startedAt: at('started_at'),
		endedAt: at('ended_at'),
		/** When the clock job last found a reading due (cleared by a reading). */
		readingDueAt: at('reading_due_at'),
		...audit()
	},
	(t) => [
		index('charge_sessions_workshop_status_idx').on(t.workshopId, t.status),
		index('charge_sessions_pack_idx').on(t.packId),
		unique('charge_sessions_id_pack_key').on(t.id, t.packId),
		foreignKey({
			name: 'charge_sessions_pack_same_workshop_fk',
			columns: [t.packId, t.workshopId],
			foreignColumns: [packs.id, packs.workshopId]
		}),
		check('charge_sessions_text_lengths', sql`char_length(${t.name}) <= 80 and char_length(${t.stopReason}) <= 500 and char_length(${t.limitsConfirmation}) <= 300`),
		check('charge_sessions_volts', sql`(${t.targetVolts} is null or ${t.targetVolts} between 1 and 5) and (${t.setVolts} is null or ${t.setVolts} between 1 and 5)`),
		check('charge_sessions_amps', sql`${t.amps} is null or (${t.amps} > 0 and ${t.amps} <= 1000)`),
		check('charge_sessions_rest_hours', sql`${t.restHours} is null or (${t.restHours} > 0 and ${t.restHours} <= 2160)`),
		check('charge_sessions_swap', sql`${t.swapMinutes} between 0 and 240`),
		check('charge_sessions_interval', sql`${t.readingIntervalMinutes} between 5 and 720`),
		check('charge_sessions_stop_reason', sql`${t.status} <> 'stopped' or char_length(${t.stopReason}) >= 1`),
		check('charge_sessions_channels', sql`jsonb_typeof(${t.channelIds}) = 'array' and jsonb_array_length(${t.channelIds}) <= 16`)
	]
);
export type ChargeSession = typeof chargeSessions.$inferSelect;

/** A step of a session's plan: one group (or the whole pack) on one channel. */
export const sessionSteps = pgTable(
	'session_steps',
	{
		id: text('id').primaryKey(),
		sessionId: text('session_id')
			.notNull()
			.references(() => chargeSessions.id, { onDelete: 'cascade' }),
		position: integer('position').notNull(),
		/** The group charged or bled; null = the whole pack in series. */
		groupId: text('group_id').references(() => packGroups.id),
		/** The charger channel's id, or null (whole-pack charger without channels, a bleed load). */
		channelId: text('channel_id'),
		/** The channel's name as shown when the plan was made ("Channel 2"). */
		channelLabel: text('channel_label').notNull().default(''),
		/** 'charge', 'top-up', 'balance', 'bleed' or 'rest'. */
		role: text('role').notNull().default('charge'),
		setVolts: doublePrecision('set_volts'),
		amps: doublePrecision('amps'),
		expectedStart: at('expected_start').notNull(),
		expectedEnd: at('expected_end').notNull(),
		preHours: doublePrecision('pre_hours').notNull().default(0),
		ccHours: doublePrecision('cc_hours').notNull().default(0),
		cvHours: doublePrecision('cv_hours').notNull().default(0),
		ah: doublePrecision('ah').notNull().default(0),
		unattendedChargeHours: doublePrecision('unattended_charge_hours').notNull().default(0),
		unattendedHoldHours: doublePrecision('unattended_hold_hours').notNull().default(0),
		actualStart: at('actual_start'),
		actualEnd: at('actual_end'),
		status: stepStatusEnum('status').notNull().default('waiting'),
		/** When the group's rest reading after this step is due (set when the step ends). */
		restReadingDueAt: at('rest_reading_due_at')
	},
	(t) => [
		uniqueIndex('session_steps_position_key').on(t.sessionId, t.position),
		index('session_steps_group_idx').on(t.groupId),
		check('session_steps_position', sql`${t.position} between 1 and 1000`),
		check('session_steps_times', sql`${t.expectedEnd} >= ${t.expectedStart} and (${t.actualEnd} is null or (${t.actualStart} is not null and ${t.actualEnd} >= ${t.actualStart}))`),
		check('session_steps_values', sql`(${t.setVolts} is null or ${t.setVolts} between 0 and 2000) and (${t.amps} is null or (${t.amps} >= 0 and ${t.amps} <= 1000)) and ${t.ah} >= 0`),
		check('session_steps_role', sql`${t.role} in ('charge','top-up','balance','bleed','rest')`),
		check('session_steps_label', sql`char_length(${t.channelLabel}) <= 80`)
	]
);
export type SessionStep = typeof sessionSteps.$inferSelect;

/**
 * A reading: one group (volts per cell, the group being P cells in parallel) or the whole pack
 * (group_id null: pack volts, divided by the groups in series before any per-cell limit).
 */
export const readings = pgTable(
	'readings',
	{
		id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
		sessionId: text('session_id').notNull(),
		/** The session's pack, so that the group is checked to be one of its groups. */
		packId: text('pack_id').notNull(),
		groupId: text('group_id'),
		stepId: text('step_id').references(() => sessionSteps.id, { onDelete: 'set null' }),
		takenAt: at('taken_at').notNull(),
		volts: doublePrecision('volts'),
		amps: doublePrecision('amps'),
		tempC: doublePrecision('temp_c'),
		ambientC: doublePrecision('ambient_c'),
		note: text('note').notNull().default(''),
		source: readingSourceEnum('source').notNull(),
		enteredBy: text('entered_by').references(() => users.id, { onDelete: 'set null' }),
		deviceTokenId: text('device_token_id').references(() => deviceTokens.id, { onDelete: 'set null' }),
		/** Made by the client (or from a file's own time and group): a repeat is stored once. */
		clientId: text('client_id').notNull(),
		receivedAt: at('received_at').notNull().defaultNow(),
		/** Set when someone edits the reading; the original values stay in audit_events. */
		editedAt: at('edited_at'),
		editedBy: text('edited_by').references(() => users.id, { onDelete: 'set null' })
	},
	(t) => [
		uniqueIndex('readings_session_client_key').on(t.sessionId, t.clientId),
		index('readings_session_taken_idx').on(t.sessionId, t.takenAt),
		index('readings_session_group_taken_idx').on(t.sessionId, t.groupId, t.takenAt),
		foreignKey({
			name: 'readings_session_same_pack_fk',
			columns: [t.sessionId, t.packId],
			foreignColumns: [chargeSessions.id, chargeSessions.packId]
		}).onDelete('cascade'),
		foreignKey({
			name: 'readings_group_same_pack_fk',
			columns: [t.groupId, t.packId],
			foreignColumns: [packGroups.id, packGroups.packId]
		}),
		// Physical ranges (src/lib/schemas/sessions.ts has the same bounds).
		check(
			'readings_volts',
			sql`${t.volts} is null or (${t.volts} >= 0 and ((${t.groupId} is not null and ${t.volts} <= 5) or (${t.groupId} is null and ${t.volts} <= 2000)))`
		),
		check('readings_amps', sql`${t.amps} is null or (${t.amps} >= -1000 and ${t.amps} <= 1000)`),
		check('readings_temps', sql`(${t.tempC} is null or ${t.tempC} between -40 and 150) and (${t.ambientC} is null or ${t.ambientC} between -40 and 80)`),
		check('readings_something', sql`${t.volts} is not null or ${t.amps} is not null or ${t.tempC} is not null or ${t.ambientC} is not null`),
		check('readings_text_lengths', sql`char_length(${t.note}) <= 500 and char_length(${t.clientId}) between 1 and 100`)
	]
);
export type Reading = typeof readings.$inferSelect;

/** A data logger's key to one session: only its SHA-256 is kept (shown once when issued). */
export const deviceTokens = pgTable(
	'device_tokens',
	{
		id: text('id').primaryKey(),
		sessionId: text('session_id')
			.notNull()
			.references(() => chargeSessions.id, { onDelete: 'cascade' }),
		name: text('name').notNull(),
		tokenHash: text('token_hash').notNull(),
		createdBy: text('created_by').references(() => users.id, { onDelete: 'set null' }),
		createdAt: at('created_at').notNull().defaultNow(),
		lastUsedAt: at('last_used_at'),
		revokedAt: at('revoked_at')
	},
	(t) => [
		uniqueIndex('device_tokens_hash_key').on(t.tokenHash),
		index('device_tokens_session_idx').on(t.sessionId),
		check('device_tokens_name', sql`char_length(${t.name}) between 1 and 60`)
	]
);
export type DeviceToken = typeof deviceTokens.$inferSelect;

/** How a workshop's logger CSV maps to readings: chosen once, used for every upload. */
export const loggerMappings = pgTable(
	'logger_mappings',
	{
		workshopId: text('workshop_id')
			.primaryKey()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		/** Our field → the file's column header. */
		columns: jsonb('columns').$type<Record<string, string>>().notNull(),
		updatedBy: text('updated_by').references(() => users.id, { onDelete: 'set null' }),
		updatedAt: at('updated_at').notNull().defaultNow()
	},
	(t) => [check('logger_mappings_columns', sql`jsonb_typeof(${t.columns}) = 'object'`)]
);

/**
 * Who changed what, when: written in the same transaction as the change. `before` and `after`
 * hold the changed fields (an edited reading's original values stay here).
 */
export const auditEvents = pgTable(
	'audit_events',
	{
		id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
		workshopId: text('workshop_id')
			.notNull()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		actorId: text('actor_id').references(() => users.id, { onDelete: 'set null' }),
		/** The actor as shown then (a person's name, or "logger <token name>"). */
		actorLabel: text('actor_label').notNull().default(''),
		at: at('at').notNull().defaultNow(),
		/** e.g. session.create, session.start, session.pause, session.stop, watch.handover, reading.edit. */
		kind: text('kind').notNull(),
		packId: text('pack_id'),
		sessionId: text('session_id'),
		/** What was changed: 'session', 'step', 'reading', 'device-token'. */
		subjectType: text('subject_type').notNull(),
		subjectId: text('subject_id').notNull(),
		before: jsonb('before').$type<Record<string, unknown> | null>(),
		after: jsonb('after').$type<Record<string, unknown> | null>()
	},
	(t) => [
		index('audit_events_workshop_at_idx').on(t.workshopId, t.at),
		index('audit_events_session_idx').on(t.sessionId, t.at),
		index('audit_events_subject_idx').on(t.subjectType, t.subjectId),
		check('audit_events_kind', sql`char_length(${t.kind}) between 1 and 60`)
	]
);
export type AuditEvent = typeof auditEvents.$inferSelect;
