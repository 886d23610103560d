import { sql } from 'drizzle-orm';
import {
	bigint,
	boolean,
	check,
	integer,
	index,
	pgEnum,
	pgTable,
	primaryKey,
	text,
	timestamp,
	uniqueIndex,
	varchar
} from 'drizzle-orm/pg-core';

const createdAt = () => timestamp('created_at', { withTimezone: true, mode: 'date' }).notNull().defaultNow();

export const users = pgTable(
	'users',
	{
		id: text('id').primaryKey(),
		// Stored lower-cased; the unique index makes one account per address.
		email: text('email').notNull(),
		name: text('name').notNull(),
		passwordHash: text('password_hash'),
		createdAt: createdAt()
	},
	(t) => [
		uniqueIndex('users_email_key').on(t.email),
		check('users_email_lower', sql`${t.email} = lower(${t.email})`),
		// RFC 5321's longest usable address, as the sign-up schema says.
		check('users_email_length', sql`char_length(${t.email}) between 1 and 254`),
		check('users_name_length', sql`char_length(${t.name}) between 1 and 100`)
	]
);
export type User = typeof users.$inferSelect;

/** lucia's session table: text id, expires_at with time zone. */
export const authSessions = pgTable(
	'auth_sessions',
	{
		id: text('id').primaryKey(),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		expiresAt: timestamp('expires_at', { withTimezone: true, mode: 'date' }).notNull()
	},
	(t) => [index('auth_sessions_user_idx').on(t.userId)]
);
export type AuthSession = typeof authSessions.$inferSelect;

export const oauthAccounts = pgTable(
	'oauth_accounts',
	{
		provider: text('provider').notNull(),
		providerUserId: text('provider_user_id').notNull(),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		email: text('email'),
		createdAt: createdAt()
	},
	(t) => [
		primaryKey({ columns: [t.provider, t.providerUserId] }),
		uniqueIndex('oauth_accounts_user_provider_key').on(t.userId, t.provider)
	]
);
export type OAuthAccount = typeof oauthAccounts.$inferSelect;

/** Only a hash of the e-mailed token is kept, so a database leak does not hand out resets. */
export const passwordResetTokens = pgTable(
	'password_reset_tokens',
	{
		tokenHash: text('token_hash').primaryKey(),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		expiresAt: timestamp('expires_at', { withTimezone: true, mode: 'date' }).notNull(),
		usedAt: timestamp('used_at', { withTimezone: true, mode: 'date' }),
		createdAt: createdAt()
	},
	(t) => [index('password_reset_tokens_user_idx').on(t.userId)]
);

export const workshops = pgTable(
	'workshops',
	{
		id: text('id').primaryKey(),
		name: text('name').notNull(),
		slug: text('slug').notNull(),
		timeZone: text('time_zone').notNull(),
		/** Minutes a critical alert may stay unacknowledged before it goes to every owner. */
		escalationMinutes: integer('escalation_minutes').notNull().default(10),
		createdAt: createdAt()
	},
	(t) => [
		uniqueIndex('workshops_slug_key').on(t.slug),
		check('workshops_escalation_minutes', sql`${t.escalationMinutes} between 1 and 240`),
		check('workshops_slug_format', sql`${t.slug} ~ '^[a-z0-9](?:[a-z0-9-]{0,46}[a-z0-9])?$'`),
		check('workshops_name_length', sql`char_length(${t.name}) between 1 and 80`)
	]
);
export type Workshop = typeof workshops.$inferSelect;

export const roleEnum = pgEnum('role', ['owner', 'builder', 'technician', 'viewer']);

export const memberships = pgTable(
	'memberships',
	{
		workshopId: text('workshop_id')
			.notNull()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		role: roleEnum('role').notNull(),
		/** Alert channels this member wants in this workshop (push goes to each device they subscribed). */
		emailAlerts: boolean('email_alerts').notNull().default(true),
		pushAlerts: boolean('push_alerts').notNull().default(true),
		/** Quiet time in the workshop's zone ("22:00"–"07:00"): holds back information alerts only. */
		quietFrom: text('quiet_from'),
		quietTo: text('quiet_to'),
		createdAt: createdAt()
	},
	(t) => [
		primaryKey({ columns: [t.workshopId, t.userId] }),
		check(
			'memberships_quiet_time',
			sql`(${t.quietFrom} is null) = (${t.quietTo} is null) and (${t.quietFrom} is null or (${t.quietFrom} ~ '^([01][0-9]|2[0-3]):[0-5][0-9]$' and ${t.quietTo} ~ '^([01][0-9]|2[0-3]):[0-5][0-9]$'))`
		),
		index('memberships_user_idx').on(t.userId)
	]
);
export type Membership = typeof memberships.$inferSelect;

export const invitations = pgTable(
	'invitations',
	{
		id: text('id').primaryKey(),
		workshopId: text('workshop_id')
			.notNull()
			.references(() => workshops.id, { onDelete: 'cascade' }),
		email: text('email').notNull(),
		role: roleEnum('role').notNull(),
		tokenHash: text('token_hash').notNull(),
		invitedBy: text('invited_by').references(() => users.id, { onDelete: 'set null' }),
		expiresAt: timestamp('expires_at', { withTimezone: true, mode: 'date' }).notNull(),
		acceptedAt: timestamp('accepted_at', { withTimezone: true, mode: 'date' }),
		acceptedBy: text('accepted_by').references(() => users.id, { onDelete: 'set null' }),
		createdAt: createdAt()
	},
	(t) => [
		uniqueIndex('invitations_token_hash_key').on(t.tokenHash),
		index('invitations_workshop_idx').on(t.workshopId),
		check('invitations_email_lower', sql`${t.email} = lower(${t.email})`),
		check('invitations_email_length', sql`char_length(${t.email}) between 1 and 254`)
	]
);
export type Invitation = typeof invitations.$inferSelect;

/**
 * Counters for rate-limiter-flexible's PostgreSQL store (its own column layout: key, points,
 * expire in epoch ms). Created here so the migration owns it, not the library at run time.
 */
export const rateLimits = pgTable('rate_limits', {
	key: varchar('key', { length: 255 }).primaryKey(),
	points: integer('points').notNull().default(0),
	expire: bigint('expire', { mode: 'number' })
});

/**
 * A provider identity that signed in for the first time and still has to choose its workshop.
 * Kept server-side (not in a cookie) so nobody can forge an identity; gone after 15 minutes.
 */
export const oauthPending = pgTable('oauth_pending', {
	tokenHash: text('token_hash').primaryKey(),
	provider: text('provider').notNull(),
	providerUserId: text('provider_user_id').notNull(),
	email: text('email').notNull(),
	name: text('name').notNull(),
	expiresAt: timestamp('expires_at', { withTimezone: true, mode: 'date' }).notNull()
});
