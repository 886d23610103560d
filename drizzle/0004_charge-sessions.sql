CREATE TYPE "public"."reading_source" AS ENUM('hand', 'file', 'device');--> statement-breakpoint
CREATE TYPE "public"."session_kind" AS ENUM('one-at-a-time', 'channels', 'bulk-top-up', 'bulk-bms', 'bleed', 'rest-check');--> statement-breakpoint
CREATE TYPE "public"."session_status" AS ENUM('draft', 'planned', 'running', 'paused', 'done', 'stopped');--> statement-breakpoint
CREATE TYPE "public"."session_target" AS ENUM('full', 'storage', 'volts');--> statement-breakpoint
CREATE TYPE "public"."step_status" AS ENUM('waiting', 'running', 'done', 'skipped');--> statement-breakpoint
CREATE TABLE "audit_events" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "audit_events_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"workshop_id" text NOT NULL,
	"actor_id" text,
	"actor_label" text DEFAULT '' NOT NULL,
	"at" timestamp with time zone DEFAULT now() NOT NULL,
	"kind" text NOT NULL,
	"pack_id" text,
	"session_id" text,
	"subject_type" text NOT NULL,
	"subject_id" text NOT NULL,
	"before" jsonb,
	"after" jsonb,
	CONSTRAINT "audit_events_kind" CHECK (char_length("audit_events"."kind") between 1 and 60)
);
--> statement-breakpoint
CREATE TABLE "charge_sessions" (
	"id" text PRIMARY KEY NOT NULL,
	"workshop_id" text NOT NULL,
	"pack_id" text NOT NULL,
	"name" text DEFAULT '' NOT NULL,
	"kind" "session_kind" NOT NULL,
	"target" "session_target" DEFAULT 'full' NOT NULL,
	"target_volts" double precision,
	"set_volts" double precision,
	"amps" double precision,
	"charger_id" text,
	"channel_ids" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"top_up_channel_id" text,
	"bleed_load" jsonb,
	"rest_hours" double precision,
	"swap_minutes" integer DEFAULT 5 NOT NULL,
	"planned_start" timestamp with time zone NOT NULL,
	"hands_on" jsonb NOT NULL,
	"reading_interval_minutes" integer DEFAULT 60 NOT NULL,
	"limits" jsonb NOT NULL,
	"limits_confirmation" text DEFAULT '' NOT NULL,
	"start_volts" jsonb DEFAULT '{}'::jsonb NOT NULL,
	"plan_summary" jsonb DEFAULT '{}'::jsonb NOT NULL,
	"planned_end" timestamp with time zone,
	"watch_user_id" text,
	"status" "session_status" DEFAULT 'planned' NOT NULL,
	"stop_reason" text DEFAULT '' NOT NULL,
	"started_at" timestamp with time zone,
	"ended_at" timestamp with time zone,
	"reading_due_at" timestamp with time zone,
	"created_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_by" text,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "charge_sessions_id_pack_key" UNIQUE("id","pack_id"),
	CONSTRAINT "charge_sessions_text_lengths" CHECK (char_length("charge_sessions"."name") <= 80 and char_length("charge_sessions"."stop_reason") <= 500 and char_length("charge_sessions"."limits_confirmation") <= 300),
	CONSTRAINT "charge_sessions_volts" CHECK (("charge_sessions"."target_volts" is null or "charge_sessions"."target_volts" between 1 and 5) and ("charge_sessions"."set_volts" is null or "charge_sessions"."set_volts" between 1 and 5)),
	CONSTRAINT "charge_sessions_amps" CHECK ("charge_sessions"."amps" is null or ("charge_sessions"."amps" > 0 and "charge_sessions"."amps" <= 1000)),
	CONSTRAINT "charge_sessions_rest_hours" CHECK ("charge_sessions"."rest_hours" is null or ("charge_sessions"."rest_hours" > 0 and "charge_sessions"."rest_hours" <= 2160)),
	CONSTRAINT "charge_sessions_swap" CHECK ("charge_sessions"."swap_minutes" between 0 and 240),
	CONSTRAINT "charge_sessions_interval" CHECK ("charge_sessions"."reading_interval_minutes" between 5 and 720),
	CONSTRAINT "charge_sessions_stop_reason" CHECK ("charge_sessions"."status" <> 'stopped' or char_length("charge_sessions"."stop_reason") >= 1),
	CONSTRAINT "charge_sessions_channels" CHECK (jsonb_typeof("charge_sessions"."channel_ids") = 'array' and jsonb_array_length("charge_sessions"."channel_ids") <= 16)
);
--> statement-breakpoint
CREATE TABLE "device_tokens" (
	"id" text PRIMARY KEY NOT NULL,
	"session_id" text NOT NULL,
	"name" text NOT NULL,
	"token_hash" text NOT NULL,
	"created_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_used_at" timestamp with time zone,
	"revoked_at" timestamp with time zone,
	CONSTRAINT "device_tokens_name" CHECK (char_length("device_tokens"."name") between 1 and 60)
);
--> statement-breakpoint
CREATE TABLE "logger_mappings" (
	"workshop_id" text PRIMARY KEY NOT NULL,
	"columns" jsonb NOT NULL,
	"updated_by" text,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "logger_mappings_columns" CHECK (jsonb_typeof("logger_mappings"."columns") = 'object')
);
--> statement-breakpoint
CREATE TABLE "readings" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "readings_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"session_id" text NOT NULL,
	"pack_id" text NOT NULL,
	"group_id" text,
	"step_id" text,
	"taken_at" timestamp with time zone NOT NULL,
	"volts" double precision,
	"amps" double precision,
	"temp_c" double precision,
	"ambient_c" double precision,
	"note" text DEFAULT '' NOT NULL,
	"source" "reading_source" NOT NULL,
	"entered_by" text,
	"device_token_id" text,
	"client_id" text NOT NULL,
	"received_at" timestamp with time zone DEFAULT now() NOT NULL,
	"edited_at" timestamp with time zone,
	"edited_by" text,
	CONSTRAINT "readings_volts" CHECK ("readings"."volts" is null or ("readings"."volts" >= 0 and (("readings"."group_id" is not null and "readings"."volts" <= 5) or ("readings"."group_id" is null and "readings"."volts" <= 2000)))),
	CONSTRAINT "readings_amps" CHECK ("readings"."amps" is null or ("readings"."amps" >= -1000 and "readings"."amps" <= 1000)),
	CONSTRAINT "readings_temps" CHECK (("readings"."temp_c" is null or "readings"."temp_c" between -40 and 150) and ("readings"."ambient_c" is null or "readings"."ambient_c" between -40 and 80)),
	CONSTRAINT "readings_something" CHECK ("readings"."volts" is not null or "readings"."amps" is not null or "readings"."temp_c" is not null or "readings"."ambient_c" is not null),
	CONSTRAINT "readings_text_lengths" CHECK (char_length("readings"."note") <= 500 and char_length("readings"."client_id") between 1 and 100)
);
--> statement-breakpoint
CREATE TABLE "session_steps" (
	"id" text PRIMARY KEY NOT NULL,
	"session_id" text NOT NULL,
	"position" integer NOT NULL,
	"group_id" text,
	"channel_id" text,
	"channel_label" text DEFAULT '' NOT NULL,
	"role" text DEFAULT 'charge' NOT NULL,
	"set_volts" double precision,
	"amps" double precision,
	"expected_start" timestamp with time zone NOT NULL,
	"expected_end" timestamp with time zone NOT NULL,
	"pre_hours" double precision DEFAULT 0 NOT NULL,
	"cc_hours" double precision DEFAULT 0 NOT NULL,
	"cv_hours" double precision DEFAULT 0 NOT NULL,
	"ah" double precision DEFAULT 0 NOT NULL,
	"unattended_charge_hours" double precision DEFAULT 0 NOT NULL,
	"unattended_hold_hours" double precision DEFAULT 0 NOT NULL,
	"actual_start" timestamp with time zone,
	"actual_end" timestamp with time zone,
	"status" "step_status" DEFAULT 'waiting' NOT NULL,
	"rest_reading_due_at" timestamp with time zone,
	CONSTRAINT "session_steps_position" CHECK ("session_steps"."position" between 1 and 1000),
	CONSTRAINT "session_steps_times" CHECK ("session_steps"."expected_end" >= "session_steps"."expected_start" and ("session_steps"."actual_end" is null or ("session_steps"."actual_start" is not null and "session_steps"."actual_end" >= "session_steps"."actual_start"))),
	CONSTRAINT "session_steps_values" CHECK (("session_steps"."set_volts" is null or "session_steps"."set_volts" between 0 and 2000) and ("session_steps"."amps" is null or ("session_steps"."amps" >= 0 and "session_steps"."amps" <= 1000)) and "session_steps"."ah" >= 0),
	CONSTRAINT "session_steps_role" CHECK ("session_steps"."role" in ('charge','top-up','balance','bleed','rest')),
	CONSTRAINT "session_steps_label" CHECK (char_length("session_steps"."channel_label") <= 80)
);
--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_id_workshop_key" UNIQUE("id","workshop_id");
ALTER TABLE "audit_events" ADD CONSTRAINT "audit_events_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "audit_events" ADD CONSTRAINT "audit_events_actor_id_users_id_fk" FOREIGN KEY ("actor_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "charge_sessions" ADD CONSTRAINT "charge_sessions_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "charge_sessions" ADD CONSTRAINT "charge_sessions_charger_id_chargers_id_fk" FOREIGN KEY ("charger_id") REFERENCES "public"."chargers"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "charge_sessions" ADD CONSTRAINT "charge_sessions_watch_user_id_users_id_fk" FOREIGN KEY ("watch_user_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "charge_sessions" ADD CONSTRAINT "charge_sessions_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "charge_sessions" ADD CONSTRAINT "charge_sessions_updated_by_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "charge_sessions" ADD CONSTRAINT "charge_sessions_pack_same_workshop_fk" FOREIGN KEY ("pack_id","workshop_id") REFERENCES "public"."packs"("id","workshop_id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "device_tokens" ADD CONSTRAINT "device_tokens_session_id_charge_sessions_id_fk" FOREIGN KEY ("session_id") REFERENCES "public"."charge_sessions"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "device_tokens" ADD CONSTRAINT "device_tokens_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "logger_mappings" ADD CONSTRAINT "logger_mappings_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "logger_mappings" ADD CONSTRAINT "logger_mappings_updated_by_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_step_id_session_steps_id_fk" FOREIGN KEY ("step_id") REFERENCES "public"."session_steps"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_entered_by_users_id_fk" FOREIGN KEY ("entered_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_device_token_id_device_tokens_id_fk" FOREIGN KEY ("device_token_id") REFERENCES "public"."device_tokens"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_edited_by_users_id_fk" FOREIGN KEY ("edited_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_session_same_pack_fk" FOREIGN KEY ("session_id","pack_id") REFERENCES "public"."charge_sessions"("id","pack_id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_group_same_pack_fk" FOREIGN KEY ("group_id","pack_id") REFERENCES "public"."pack_groups"("id","pack_id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "session_steps" ADD CONSTRAINT "session_steps_session_id_charge_sessions_id_fk" FOREIGN KEY ("session_id") REFERENCES "public"."charge_sessions"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "session_steps" ADD CONSTRAINT "session_steps_group_id_pack_groups_id_fk" FOREIGN KEY ("group_id") REFERENCES "public"."pack_groups"("id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "audit_events_workshop_at_idx" ON "audit_events" USING btree ("workshop_id","at");--> statement-breakpoint
CREATE INDEX "audit_events_session_idx" ON "audit_events" USING btree ("session_id","at");--> statement-breakpoint
CREATE INDEX "audit_events_subject_idx" ON "audit_events" USING btree ("subject_type","subject_id");--> statement-breakpoint
CREATE INDEX "charge_sessions_workshop_status_idx" ON "charge_sessions" USING btree ("workshop_id","status");--> statement-breakpoint
CREATE INDEX "charge_sessions_pack_idx" ON "charge_sessions" USING btree ("pack_id");--> statement-breakpoint
CREATE UNIQUE INDEX "device_tokens_hash_key" ON "device_tokens" USING btree ("token_hash");--> statement-breakpoint
CREATE INDEX "device_tokens_session_idx" ON "device_tokens" USING btree ("session_id");--> statement-breakpoint
CREATE UNIQUE INDEX "readings_session_client_key" ON "readings" USING btree ("session_id","client_id");--> statement-breakpoint
CREATE INDEX "readings_session_taken_idx" ON "readings" USING btree ("session_id","taken_at");--> statement-breakpoint
CREATE INDEX "readings_session_group_taken_idx" ON "readings" USING btree ("session_id","group_id","taken_at");--> statement-breakpoint
CREATE UNIQUE INDEX "session_steps_position_key" ON "session_steps" USING btree ("session_id","position");--> statement-breakpoint
CREATE INDEX "session_steps_group_idx" ON "session_steps" USING btree ("group_id");--> statement-breakpoint
-- Written by hand (Drizzle's schema cannot say SET NULL on one column of a composite key): the
-- technician on watch is a member of the session's workshop; removing that member clears the watch.
ALTER TABLE "charge_sessions" ADD CONSTRAINT "charge_sessions_watch_membership_fk"
	FOREIGN KEY ("workshop_id", "watch_user_id") REFERENCES "public"."memberships"("workshop_id", "user_id")
	ON DELETE SET NULL ("watch_user_id") ON UPDATE NO ACTION;--> statement-breakpoint
-- A pack with sessions keeps its shape: the application answers 409 first (src/lib/server/packs.ts);
-- this trigger makes sure no other path changes series, parallel or cell spec under recorded readings.
CREATE FUNCTION "packs_keep_shape"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
	IF (NEW."series", NEW."parallel", NEW."cell_spec_id") IS DISTINCT FROM (OLD."series", OLD."parallel", OLD."cell_spec_id")
		AND EXISTS (SELECT 1 FROM "charge_sessions" s WHERE s."pack_id" = OLD."id") THEN
		RAISE EXCEPTION 'pack % has charge sessions: its series, parallel and cell spec stay as they are', OLD."id"
			USING ERRCODE = 'check_violation', CONSTRAINT = 'packs_keep_shape';
	END IF;
	RETURN NEW;
END $$;--> statement-breakpoint
CREATE TRIGGER "packs_keep_shape" BEFORE UPDATE OF "series", "parallel", "cell_spec_id" ON "packs"
	FOR EACH ROW EXECUTE FUNCTION "packs_keep_shape"();
