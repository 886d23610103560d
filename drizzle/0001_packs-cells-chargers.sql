CREATE TYPE "public"."cell_placement" AS ENUM('unsorted', 'group', 'spare', 'rejected');--> statement-breakpoint
CREATE TYPE "public"."chemistry_family" AS ENUM('li-ion', 'lfp', 'lto');--> statement-breakpoint
CREATE TYPE "public"."pack_status" AS ENUM('planning', 'building', 'in-service', 'retired');--> statement-breakpoint
CREATE TYPE "public"."charger_kind" AS ENUM('bench-supply', 'multi-channel', 'pack-charger');--> statement-breakpoint
CREATE TABLE "attachments" (
	"id" text PRIMARY KEY NOT NULL,
	"pack_id" text NOT NULL,
	"file_name" text NOT NULL,
	"content_type" text NOT NULL,
	"size_bytes" bigint NOT NULL,
	"stored_name" text NOT NULL,
	"thumbnail_name" text,
	"uploaded_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "attachments_size" CHECK ("attachments"."size_bytes" > 0 and "attachments"."size_bytes" <= 10485760),
	CONSTRAINT "attachments_type" CHECK ("attachments"."content_type" in ('image/jpeg','image/png','image/webp','image/heic','application/pdf'))
);
--> statement-breakpoint
CREATE TABLE "cell_specs" (
	"id" text PRIMARY KEY NOT NULL,
	"workshop_id" text NOT NULL,
	"name" text NOT NULL,
	"chemistry_id" text,
	"chemistry_profile_id" text,
	"capacity_ah" double precision NOT NULL,
	"max_continuous_amps" double precision NOT NULL,
	"max_burst_amps" double precision,
	"max_charge_amps" double precision NOT NULL,
	"resistance_milliohms" double precision,
	"created_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_by" text,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "cell_specs_one_chemistry" CHECK (("cell_specs"."chemistry_id" is null) <> ("cell_specs"."chemistry_profile_id" is null)),
	CONSTRAINT "cell_specs_builtin" CHECK ("cell_specs"."chemistry_id" is null or "cell_specs"."chemistry_id" in ('nmc','nca','lco','lmo','lfp','lto')),
	CONSTRAINT "cell_specs_capacity" CHECK ("cell_specs"."capacity_ah" > 0 and "cell_specs"."capacity_ah" <= 2000),
	CONSTRAINT "cell_specs_currents" CHECK ("cell_specs"."max_continuous_amps" > 0 and "cell_specs"."max_charge_amps" > 0 and ("cell_specs"."max_burst_amps" is null or "cell_specs"."max_burst_amps" >= "cell_specs"."max_continuous_amps")),
	CONSTRAINT "cell_specs_resistance" CHECK ("cell_specs"."resistance_milliohms" is null or "cell_specs"."resistance_milliohms" > 0)
);
--> statement-breakpoint
CREATE TABLE "cells" (
	"id" text PRIMARY KEY NOT NULL,
	"pack_id" text NOT NULL,
	"label" text NOT NULL,
	"arrival_volts" double precision NOT NULL,
	"resistance_milliohms" double precision,
	"capacity_ah" double precision,
	"placement" "cell_placement" DEFAULT 'unsorted' NOT NULL,
	"group_id" text,
	"created_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_by" text,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "cells_volts" CHECK ("cells"."arrival_volts" >= 0 and "cells"."arrival_volts" <= 5),
	CONSTRAINT "cells_resistance" CHECK ("cells"."resistance_milliohms" is null or ("cells"."resistance_milliohms" > 0 and "cells"."resistance_milliohms" <= 10000)),
	CONSTRAINT "cells_capacity" CHECK ("cells"."capacity_ah" is null or ("cells"."capacity_ah" > 0 and "cells"."capacity_ah" <= 2000)),
	CONSTRAINT "cells_group_placement" CHECK (("cells"."placement" = 'group') = ("cells"."group_id" is not null)),
	CONSTRAINT "cells_label" CHECK (char_length("cells"."label") between 1 and 60)
);
--> statement-breakpoint
CREATE TABLE "chemistry_profiles" (
	"id" text PRIMARY KEY NOT NULL,
	"workshop_id" text NOT NULL,
	"name" text NOT NULL,
	"family" "chemistry_family" NOT NULL,
	"nominal_volts" double precision NOT NULL,
	"max_charge_volts" double precision NOT NULL,
	"full_discharge_volts" double precision NOT NULL,
	"min_volts" double precision NOT NULL,
	"storage_volts" double precision NOT NULL,
	"charge_temp_min_c" double precision NOT NULL,
	"charge_temp_max_c" double precision NOT NULL,
	"discharge_temp_min_c" double precision NOT NULL,
	"discharge_temp_max_c" double precision NOT NULL,
	"default_charge_c" double precision NOT NULL,
	"termination_c" double precision NOT NULL,
	"cv_share_at_1c" double precision NOT NULL,
	"rest_curve" jsonb NOT NULL,
	"source" text DEFAULT '' NOT NULL,
	"created_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_by" text,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "chemistry_profiles_volts_order" CHECK (0 < "chemistry_profiles"."min_volts" and "chemistry_profiles"."min_volts" <= "chemistry_profiles"."full_discharge_volts" and "chemistry_profiles"."full_discharge_volts" < "chemistry_profiles"."nominal_volts" and "chemistry_profiles"."nominal_volts" < "chemistry_profiles"."max_charge_volts" and "chemistry_profiles"."max_charge_volts" <= 5),
	CONSTRAINT "chemistry_profiles_storage" CHECK ("chemistry_profiles"."storage_volts" between "chemistry_profiles"."full_discharge_volts" and "chemistry_profiles"."max_charge_volts"),
	CONSTRAINT "chemistry_profiles_temps" CHECK ("chemistry_profiles"."charge_temp_min_c" < "chemistry_profiles"."charge_temp_max_c" and "chemistry_profiles"."discharge_temp_min_c" < "chemistry_profiles"."discharge_temp_max_c" and "chemistry_profiles"."charge_temp_min_c" >= -40 and "chemistry_profiles"."charge_temp_max_c" <= 100),
	CONSTRAINT "chemistry_profiles_rates" CHECK ("chemistry_profiles"."default_charge_c" > 0 and "chemistry_profiles"."default_charge_c" <= 20 and "chemistry_profiles"."termination_c" > 0 and "chemistry_profiles"."termination_c" < 1 and "chemistry_profiles"."cv_share_at_1c" >= 0 and "chemistry_profiles"."cv_share_at_1c" < 1)
);
--> statement-breakpoint
CREATE TABLE "pack_groups" (
	"id" text PRIMARY KEY NOT NULL,
	"pack_id" text NOT NULL,
	"index" integer NOT NULL,
	CONSTRAINT "pack_groups_index" CHECK ("pack_groups"."index" >= 1)
);
--> statement-breakpoint
CREATE TABLE "packs" (
	"id" text PRIMARY KEY NOT NULL,
	"workshop_id" text NOT NULL,
	"name" text NOT NULL,
	"cell_spec_id" text NOT NULL,
	"series" integer NOT NULL,
	"parallel" integer NOT NULL,
	"bms_fitted" boolean DEFAULT false NOT NULL,
	"bms_balance_amps" double precision,
	"status" "pack_status" DEFAULT 'planning' NOT NULL,
	"pack_owner_id" text,
	"measured_peak_amps" double precision,
	"measured_peak_note" text DEFAULT '' NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	"created_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_by" text,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "packs_topology" CHECK ("packs"."series" between 1 and 400 and "packs"."parallel" between 1 and 200),
	CONSTRAINT "packs_balance" CHECK ("packs"."bms_balance_amps" is null or ("packs"."bms_balance_amps" > 0 and "packs"."bms_balance_amps" <= 50)),
	CONSTRAINT "packs_peak" CHECK ("packs"."measured_peak_amps" is null or "packs"."measured_peak_amps" >= 0)
);
--> statement-breakpoint
CREATE TABLE "charger_channels" (
	"id" text PRIMARY KEY NOT NULL,
	"charger_id" text NOT NULL,
	"position" integer NOT NULL,
	"name" text NOT NULL,
	"max_volts" double precision NOT NULL,
	"max_amps" double precision NOT NULL,
	"max_watts" double precision,
	"balance_amps" double precision,
	"max_series_cells" integer,
	CONSTRAINT "charger_channels_limits" CHECK ("charger_channels"."max_volts" > 0 and "charger_channels"."max_volts" <= 1000 and "charger_channels"."max_amps" > 0 and "charger_channels"."max_amps" <= 1000),
	CONSTRAINT "charger_channels_watts" CHECK ("charger_channels"."max_watts" is null or "charger_channels"."max_watts" > 0),
	CONSTRAINT "charger_channels_balance" CHECK ("charger_channels"."balance_amps" is null or "charger_channels"."balance_amps" > 0),
	CONSTRAINT "charger_channels_series" CHECK ("charger_channels"."max_series_cells" is null or "charger_channels"."max_series_cells" between 1 and 400)
);
--> statement-breakpoint
CREATE TABLE "chargers" (
	"id" text PRIMARY KEY NOT NULL,
	"workshop_id" text NOT NULL,
	"name" text NOT NULL,
	"kind" charger_kind NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	"created_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_by" text,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "attachments" ADD CONSTRAINT "attachments_pack_id_packs_id_fk" FOREIGN KEY ("pack_id") REFERENCES "public"."packs"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "attachments" ADD CONSTRAINT "attachments_uploaded_by_users_id_fk" FOREIGN KEY ("uploaded_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_chemistry_profile_id_chemistry_profiles_id_fk" FOREIGN KEY ("chemistry_profile_id") REFERENCES "public"."chemistry_profiles"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_updated_by_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cells" ADD CONSTRAINT "cells_pack_id_packs_id_fk" FOREIGN KEY ("pack_id") REFERENCES "public"."packs"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cells" ADD CONSTRAINT "cells_group_id_pack_groups_id_fk" FOREIGN KEY ("group_id") REFERENCES "public"."pack_groups"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cells" ADD CONSTRAINT "cells_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cells" ADD CONSTRAINT "cells_updated_by_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_updated_by_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "pack_groups" ADD CONSTRAINT "pack_groups_pack_id_packs_id_fk" FOREIGN KEY ("pack_id") REFERENCES "public"."packs"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_cell_spec_id_cell_specs_id_fk" FOREIGN KEY ("cell_spec_id") REFERENCES "public"."cell_specs"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_pack_owner_id_users_id_fk" FOREIGN KEY ("pack_owner_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_updated_by_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "charger_channels" ADD CONSTRAINT "charger_channels_charger_id_chargers_id_fk" FOREIGN KEY ("charger_id") REFERENCES "public"."chargers"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "chargers" ADD CONSTRAINT "chargers_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "chargers" ADD CONSTRAINT "chargers_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "chargers" ADD CONSTRAINT "chargers_updated_by_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "attachments_pack_idx" ON "attachments" USING btree ("pack_id");--> statement-breakpoint
CREATE UNIQUE INDEX "cell_specs_workshop_name_key" ON "cell_specs" USING btree ("workshop_id","name");--> statement-breakpoint
CREATE UNIQUE INDEX "cells_pack_label_key" ON "cells" USING btree ("pack_id","label");--> statement-breakpoint
CREATE INDEX "cells_group_idx" ON "cells" USING btree ("group_id");--> statement-breakpoint
CREATE UNIQUE INDEX "chemistry_profiles_workshop_name_key" ON "chemistry_profiles" USING btree ("workshop_id","name");--> statement-breakpoint
CREATE UNIQUE INDEX "pack_groups_pack_index_key" ON "pack_groups" USING btree ("pack_id","index");--> statement-breakpoint
CREATE INDEX "packs_workshop_idx" ON "packs" USING btree ("workshop_id");--> statement-breakpoint
CREATE UNIQUE INDEX "charger_channels_position_key" ON "charger_channels" USING btree ("charger_id","position");--> statement-breakpoint
CREATE INDEX "charger_channels_charger_idx" ON "charger_channels" USING btree ("charger_id");--> statement-breakpoint
CREATE UNIQUE INDEX "chargers_workshop_name_key" ON "chargers" USING btree ("workshop_id","name");