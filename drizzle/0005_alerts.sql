CREATE TYPE "public"."alert_severity" AS ENUM('info', 'warning', 'critical');--> statement-breakpoint
CREATE TABLE "alert_deliveries" (
	"id" text PRIMARY KEY NOT NULL,
	"alert_id" text NOT NULL,
	"user_id" text NOT NULL,
	"channel" text NOT NULL,
	"reason" text NOT NULL,
	"status" text DEFAULT 'pending' NOT NULL,
	"attempts" integer DEFAULT 0 NOT NULL,
	"log" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"queued_at" timestamp with time zone,
	"last_attempt_at" timestamp with time zone,
	"sent_at" timestamp with time zone,
	CONSTRAINT "alert_deliveries_channel" CHECK ("alert_deliveries"."channel" in ('email','push')),
	CONSTRAINT "alert_deliveries_reason" CHECK ("alert_deliveries"."reason" in ('watcher','on-watch','escalation')),
	CONSTRAINT "alert_deliveries_status" CHECK ("alert_deliveries"."status" in ('pending','sent','failed','held','gone')),
	CONSTRAINT "alert_deliveries_attempts" CHECK ("alert_deliveries"."attempts" >= 0 and jsonb_typeof("alert_deliveries"."log") = 'array')
);
--> statement-breakpoint
CREATE TABLE "alerts" (
	"id" text PRIMARY KEY NOT NULL,
	"workshop_id" text NOT NULL,
	"pack_id" text NOT NULL,
	"session_id" text NOT NULL,
	"group_id" text,
	"group_key" text DEFAULT '' NOT NULL,
	"kind" text NOT NULL,
	"severity" "alert_severity" NOT NULL,
	"title" text NOT NULL,
	"message" text NOT NULL,
	"action" text DEFAULT '' NOT NULL,
	"value" double precision,
	"threshold" double precision,
	"unit" text DEFAULT '' NOT NULL,
	"reading_id" bigint,
	"details" jsonb DEFAULT '{}'::jsonb NOT NULL,
	"opened_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_seen_at" timestamp with time zone DEFAULT now() NOT NULL,
	"cleared_at" timestamp with time zone,
	"acknowledged_at" timestamp with time zone,
	"acknowledged_by" text,
	"ack_note" text DEFAULT '' NOT NULL,
	"escalated_at" timestamp with time zone,
	CONSTRAINT "alerts_kind" CHECK ("alerts"."kind" in ('over-voltage','under-voltage','over-temperature','cold-charge','heat-rise','drift','reading-overdue','step-overrun','step-finished','session-drift')),
	CONSTRAINT "alerts_group_key" CHECK ("alerts"."group_key" = coalesce("alerts"."group_id", '')),
	CONSTRAINT "alerts_text_lengths" CHECK (char_length("alerts"."title") between 1 and 200 and char_length("alerts"."message") <= 2000 and char_length("alerts"."action") <= 2000 and char_length("alerts"."ack_note") <= 500 and char_length("alerts"."unit") <= 20),
	CONSTRAINT "alerts_ack" CHECK ("alerts"."acknowledged_by" is null or "alerts"."acknowledged_at" is not null)
);
--> statement-breakpoint
CREATE TABLE "push_subscriptions" (
	"id" text PRIMARY KEY NOT NULL,
	"user_id" text NOT NULL,
	"endpoint" text NOT NULL,
	"p256dh" text NOT NULL,
	"auth" text NOT NULL,
	"label" text DEFAULT '' NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_success_at" timestamp with time zone,
	CONSTRAINT "push_subscriptions_values" CHECK ("push_subscriptions"."endpoint" like 'https://%' and char_length("push_subscriptions"."endpoint") <= 2000 and char_length("push_subscriptions"."p256dh") between 80 and 100 and char_length("push_subscriptions"."auth") between 16 and 32 and char_length("push_subscriptions"."label") <= 80)
);
--> statement-breakpoint
CREATE TABLE "session_watchers" (
	"session_id" text NOT NULL,
	"workshop_id" text NOT NULL,
	"user_id" text NOT NULL,
	"watching" boolean NOT NULL,
	"changed_by" text,
	"changed_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "session_watchers_session_id_user_id_pk" PRIMARY KEY("session_id","user_id")
);
--> statement-breakpoint
ALTER TABLE "memberships" ADD COLUMN "email_alerts" boolean DEFAULT true NOT NULL;--> statement-breakpoint
ALTER TABLE "memberships" ADD COLUMN "push_alerts" boolean DEFAULT true NOT NULL;--> statement-breakpoint
ALTER TABLE "memberships" ADD COLUMN "quiet_from" text;--> statement-breakpoint
ALTER TABLE "memberships" ADD COLUMN "quiet_to" text;--> statement-breakpoint
ALTER TABLE "workshops" ADD COLUMN "escalation_minutes" integer DEFAULT 10 NOT NULL;--> statement-breakpoint
ALTER TABLE "alert_deliveries" ADD CONSTRAINT "alert_deliveries_alert_id_alerts_id_fk" FOREIGN KEY ("alert_id") REFERENCES "public"."alerts"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alert_deliveries" ADD CONSTRAINT "alert_deliveries_user_id_users_id_fk" FOREIGN KEY ("user_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alerts" ADD CONSTRAINT "alerts_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alerts" ADD CONSTRAINT "alerts_reading_id_readings_id_fk" FOREIGN KEY ("reading_id") REFERENCES "public"."readings"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alerts" ADD CONSTRAINT "alerts_acknowledged_by_users_id_fk" FOREIGN KEY ("acknowledged_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alerts" ADD CONSTRAINT "alerts_session_same_pack_fk" FOREIGN KEY ("session_id","pack_id") REFERENCES "public"."charge_sessions"("id","pack_id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alerts" ADD CONSTRAINT "alerts_pack_same_workshop_fk" FOREIGN KEY ("pack_id","workshop_id") REFERENCES "public"."packs"("id","workshop_id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alerts" ADD CONSTRAINT "alerts_group_same_pack_fk" FOREIGN KEY ("group_id","pack_id") REFERENCES "public"."pack_groups"("id","pack_id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "push_subscriptions" ADD CONSTRAINT "push_subscriptions_user_id_users_id_fk" FOREIGN KEY ("user_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "session_watchers" ADD CONSTRAINT "session_watchers_session_id_charge_sessions_id_fk" FOREIGN KEY ("session_id") REFERENCES "public"."charge_sessions"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "session_watchers" ADD CONSTRAINT "session_watchers_changed_by_users_id_fk" FOREIGN KEY ("changed_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "alert_deliveries_key" ON "alert_deliveries" USING btree ("alert_id","user_id","channel","reason");--> statement-breakpoint
CREATE INDEX "alert_deliveries_unqueued_idx" ON "alert_deliveries" USING btree ("created_at") WHERE "alert_deliveries"."status" = 'pending' and "alert_deliveries"."queued_at" is null;--> statement-breakpoint
CREATE INDEX "alert_deliveries_user_idx" ON "alert_deliveries" USING btree ("user_id");--> statement-breakpoint
CREATE UNIQUE INDEX "alerts_active_condition_key" ON "alerts" USING btree ("session_id","kind","group_key","severity") WHERE "alerts"."cleared_at" is null;--> statement-breakpoint
CREATE INDEX "alerts_workshop_opened_idx" ON "alerts" USING btree ("workshop_id","opened_at");--> statement-breakpoint
CREATE INDEX "alerts_unacknowledged_idx" ON "alerts" USING btree ("workshop_id","severity") WHERE "alerts"."acknowledged_at" is null;--> statement-breakpoint
CREATE INDEX "alerts_session_idx" ON "alerts" USING btree ("session_id","opened_at");--> statement-breakpoint
CREATE UNIQUE INDEX "push_subscriptions_endpoint_key" ON "push_subscriptions" USING btree ("endpoint");--> statement-breakpoint
CREATE INDEX "push_subscriptions_user_idx" ON "push_subscriptions" USING btree ("user_id");--> statement-breakpoint
ALTER TABLE "memberships" ADD CONSTRAINT "memberships_quiet_time" CHECK (("memberships"."quiet_from" is null) = ("memberships"."quiet_to" is null) and ("memberships"."quiet_from" is null or ("memberships"."quiet_from" ~ '^([01][0-9]|2[0-3]):[0-5][0-9]$' and "memberships"."quiet_to" ~ '^([01][0-9]|2[0-3]):[0-5][0-9]$')));--> statement-breakpoint
ALTER TABLE "workshops" ADD CONSTRAINT "workshops_escalation_minutes" CHECK ("workshops"."escalation_minutes" between 1 and 240);--> statement-breakpoint
-- Hand-written: a watcher is a member of the session's workshop; leaving the workshop ends the watch.
ALTER TABLE "session_watchers" ADD CONSTRAINT "session_watchers_member_fk" FOREIGN KEY ("workshop_id", "user_id") REFERENCES "public"."memberships"("workshop_id", "user_id") ON DELETE cascade ON UPDATE no action;
