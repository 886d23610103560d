/**
 * Alerts: a condition found on a reading or by the clock (over-voltage on group 7, a reading
 * overdue), who is told of it (watchers, deliveries), how (push on a device, e-mail) and who
 * acknowledged it. A delivery row is written in the same transaction as its alert (an outbox):
 * a job sends it, so a crash after the commit loses nothing.
 */
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
	primaryKey,
	text,
	timestamp,
	uniqueIndex
} from 'drizzle-orm/pg-core';
import { users, workshops } from './accounts';
import { packGroups, packs } from './packs';
import { chargeSessions, readings } from './sessions';

const at = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

export const alertSeverityEnum = pgEnum('alert_severity', ['info', 'warning', 'critical']);

/** The engine's alert kinds (limits.ts) and the drift between sessions of one pack. */
export const ALERT_KINDS = [
	'over-voltage',
	'under-voltage',
	'over-temperature',
	'cold-charge',
	'heat-rise',
	'drift',
	'reading-overdue',
	'step-overrun',
	'step-finished',
	'session-drift'
] as const;
export type StoredAlertKind = (typeof ALERT_KINDS)[number];

export const alerts = pgTable(
	'alerts',
	{
		id: text('id').primaryKey(),
		workshopId: text('workshop_id')
			.notNull()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		packId: text('pack_id').notNull(),
		sessionId: text('session_id').notNull(),
		/** The group the condition is on; null for the whole session (a reading overdue). */
		groupId: text('group_id'),
		/** groupId or '' — part of the condition's key (a unique index cannot compare nulls). */
		groupKey: text('group_key').notNull().default(''),
		kind: text('kind').$type<StoredAlertKind>().notNull(),
		severity: alertSeverityEnum('severity').notNull(),
		/** Short line for lists and notifications ("Group 7: over voltage"). */
		title: text('title').notNull(),
		/** What was found, in words (the engine's message). */
		message: text('message').notNull(),
		/** What to do now, in plain words (critical alerts follow references.md's safety section). */
		action: text('action').notNull().default(''),
		/** The measured value and the limit, in the unit of the limit (V per cell, °C, minutes…). */
		value: doublePrecision('value'),
		threshold: doublePrecision('threshold'),
		unit: text('unit').notNull().default(''),
		/** The reading that raised it, when a reading did. */
		readingId: bigint('reading_id', { mode: 'number' }).references(() => readings.id, { onDelete: 'set null' }),
		/** Numbers behind a drift between sessions (gaps now and at the last comparable session). */
		details: jsonb('details').$type<Record<string, unknown>>().notNull().default({}),
		openedAt: at('opened_at').notNull().defaultNow(),
		/** Last time the condition was found again (it raised nothing new). */
		lastSeenAt: at('last_seen_at').notNull().defaultNow(),
		/** When the condition was gone (or a louder alert of the same condition replaced it). */
		clearedAt: at('cleared_at'),
		acknowledgedAt: at('acknowledged_at'),
		acknowledgedBy: text('acknowledged_by').references(() => users.id, { onDelete: 'set null' }),
		ackNote: text('ack_note').notNull().default(''),
		/** When a critical alert nobody acknowledged went to every owner of the workshop. */
		escalatedAt: at('escalated_at')
	},
	(t) => [
		// One active alert per condition: two app instances evaluating one reading raise it once.
		uniqueIndex('alerts_active_condition_key')
			.on(t.sessionId, t.kind, t.groupKey, t.severity)
			.where(sql`${t.clearedAt} is null`),
		index('alerts_workshop_opened_idx').on(t.workshopId, t.openedAt),
		index('alerts_unacknowledged_idx').on(t.workshopId, t.severity).where(sql`${t.acknowledgedAt} is null`),
		index('alerts_session_idx').on(t.sessionId, t.openedAt),
		foreignKey({
			name: 'alerts_session_same_pack_fk',
			columns: [t.sessionId, t.packId],
			foreignColumns: [chargeSessions.id, chargeSessions.packId]
		}).onDelete('cascade'),
		foreignKey({
			name: 'alerts_pack_same_workshop_fk',
			columns: [t.packId, t.workshopId],
			foreignColumns: [packs.id, packs.workshopId]
		}),
		foreignKey({
			name: 'alerts_group_same_pack_fk',
			columns: [t.groupId, t.packId],
			foreignColumns: [packGroups.id, packGroups.packId]
		}),
		check('alerts_kind', sql`${t.kind} in (${sql.raw(ALERT_KINDS.map((k) => `'${k}'`).join(','))})`),
		check('alerts_group_key', sql`${t.groupKey} = coalesce(${t.groupId}, '')`),
		check(
			'alerts_text_lengths',
			sql`char_length(${t.title}) between 1 and 200 and char_length(${t.message}) <= 2000 and char_length(${t.action}) <= 2000 and char_length(${t.ackNote}) <= 500 and char_length(${t.unit}) <= 20`
		),
		check('alerts_ack', sql`${t.acknowledgedBy} is null or ${t.acknowledgedAt} is not null`)
	]
);
export type Alert = typeof alerts.$inferSelect;

export const DELIVERY_CHANNELS = ['email', 'push'] as const;
export type DeliveryChannel = (typeof DELIVERY_CHANNELS)[number];
/** Why a person gets it: they watch the session, they are the technician on watch, or it escalated to them. */
export const DELIVERY_REASONS = ['watcher', 'on-watch', 'escalation'] as const;
export type DeliveryReason = (typeof DELIVERY_REASONS)[number];
/**
 * pending: waiting for (or between) attempts; sent: the mail server or push service took it;
 * failed: every attempt failed; held: quiet time (information alerts only); gone: no device to push to.
 */
export const DELIVERY_STATUSES = ['pending', 'sent', 'failed', 'held', 'gone'] as const;
export type DeliveryStatus = (typeof DELIVERY_STATUSES)[number];

/**
 * One try of a delivery. `cut`: the process stopped during the try (a crash, a kill) and never
 * wrote its outcome — the message may have gone out, so the next try may deliver it twice.
 */
export type DeliveryAttempt = { at: string; ok: boolean; detail: string; cut?: true };

/** One alert to one person on one channel: the outbox row its job sends, and the log of its attempts. */
export const alertDeliveries = pgTable(
	'alert_deliveries',
	{
		id: text('id').primaryKey(),
		alertId: text('alert_id')
			.notNull()
			.references(() => alerts.id, { onDelete: 'cascade' }),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		channel: text('channel').$type<DeliveryChannel>().notNull(),
		reason: text('reason').$type<DeliveryReason>().notNull(),
		status: text('status').$type<DeliveryStatus>().notNull().default('pending'),
		attempts: integer('attempts').notNull().default(0),
		log: jsonb('log').$type<DeliveryAttempt[]>().notNull().default([]),
		createdAt: at('created_at').notNull().defaultNow(),
		/** When its job was handed to pg-boss; a pending row without it is picked up by the outbox sweep. */
		queuedAt: at('queued_at'),
		lastAttemptAt: at('last_attempt_at'),
		sentAt: at('sent_at')
	},
	(t) => [
		uniqueIndex('alert_deliveries_key').on(t.alertId, t.userId, t.channel, t.reason),
		index('alert_deliveries_unqueued_idx').on(t.createdAt).where(sql`${t.status} = 'pending' and ${t.queuedAt} is null`),
		index('alert_deliveries_user_idx').on(t.userId),
		check('alert_deliveries_channel', sql`${t.channel} in ('email','push')`),
		check('alert_deliveries_reason', sql`${t.reason} in ('watcher','on-watch','escalation')`),
		check('alert_deliveries_status', sql`${t.status} in ('pending','sent','failed','held','gone')`),
		check('alert_deliveries_attempts', sql`${t.attempts} >= 0 and jsonb_typeof(${t.log}) = 'array'`)
	]
);
export type AlertDelivery = typeof alertDeliveries.$inferSelect;

/** A browser's push subscription (one per device and person); dropped when the push service says it is gone. */
export const pushSubscriptions = pgTable(
	'push_subscriptions',
	{
		id: text('id').primaryKey(),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		endpoint: text('endpoint').notNull(),
		p256dh: text('p256dh').notNull(),
		auth: text('auth').notNull(),
		/** The device as the person named it, or from its browser ("Chrome on Android"). */
		label: text('label').notNull().default(''),
		createdAt: at('created_at').notNull().defaultNow(),
		lastSuccessAt: at('last_success_at')
	},
	(t) => [
		uniqueIndex('push_subscriptions_endpoint_key').on(t.endpoint),
		index('push_subscriptions_user_idx').on(t.userId),
		check(
			'push_subscriptions_values',
			sql`${t.endpoint} like 'https://%' and char_length(${t.endpoint}) <= 2000 and char_length(${t.p256dh}) between 80 and 100 and char_length(${t.auth}) between 16 and 32 and char_length(${t.label}) <= 80`
		)
	]
);
export type PushSubscriptionRow = typeof pushSubscriptions.$inferSelect;

/**
 * Changes to a session's default watchers (the workshop's owners, the builder who planned it, the
 * technician on watch, the pack's owner-member): someone added, or a default removed. The
 * technician on watch is always told, whatever this says.
 */
export const sessionWatchers = pgTable(
	'session_watchers',
	{
		sessionId: text('session_id')
			.notNull()
			.references(() => chargeSessions.id, { onDelete: 'cascade' }),
		workshopId: text('workshop_id').notNull(),
		userId: text('user_id').notNull(),
		watching: boolean('watching').notNull(),
		changedBy: text('changed_by').references(() => users.id, { onDelete: 'set null' }),
		changedAt: at('changed_at').notNull().defaultNow()
	},
	(t) => [
		primaryKey({ columns: [t.sessionId, t.userId] })
		// (workshop_id, user_id) → memberships, cascade: hand-written in the migration.
	]
);
export type SessionWatcher = typeof sessionWatchers.$inferSelect;
