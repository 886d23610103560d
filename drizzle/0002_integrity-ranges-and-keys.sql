ALTER TABLE "cell_specs" DROP CONSTRAINT "cell_specs_currents";--> statement-breakpoint
ALTER TABLE "cell_specs" DROP CONSTRAINT "cell_specs_resistance";--> statement-breakpoint
ALTER TABLE "pack_groups" DROP CONSTRAINT "pack_groups_index";--> statement-breakpoint
ALTER TABLE "packs" DROP CONSTRAINT "packs_peak";--> statement-breakpoint
ALTER TABLE "charger_channels" DROP CONSTRAINT "charger_channels_watts";--> statement-breakpoint
ALTER TABLE "charger_channels" DROP CONSTRAINT "charger_channels_balance";--> statement-breakpoint
ALTER TABLE "cell_specs" DROP CONSTRAINT "cell_specs_chemistry_profile_id_chemistry_profiles_id_fk";--> statement-breakpoint
ALTER TABLE "cells" DROP CONSTRAINT "cells_group_id_pack_groups_id_fk";--> statement-breakpoint
ALTER TABLE "packs" DROP CONSTRAINT "packs_cell_spec_id_cell_specs_id_fk";--> statement-breakpoint
DROP INDEX "cells_pack_label_key";--> statement-breakpoint
ALTER TABLE "cell_specs" ADD COLUMN "max_burst_seconds" integer;--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_id_workshop_key" UNIQUE("id","workshop_id");--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_id_workshop_key" UNIQUE("id","workshop_id");--> statement-breakpoint
ALTER TABLE "pack_groups" ADD CONSTRAINT "pack_groups_id_pack_key" UNIQUE("id","pack_id");--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_profile_same_workshop_fk" FOREIGN KEY ("chemistry_profile_id","workshop_id") REFERENCES "public"."chemistry_profiles"("id","workshop_id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "cells" ADD CONSTRAINT "cells_group_same_pack_fk" FOREIGN KEY ("group_id","pack_id") REFERENCES "public"."pack_groups"("id","pack_id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_cell_spec_same_workshop_fk" FOREIGN KEY ("cell_spec_id","workshop_id") REFERENCES "public"."cell_specs"("id","workshop_id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
-- Labels that differ only in case (possible before: the old index was case-sensitive) get a
-- numbered suffix on all but the first, so the case-insensitive index can be built.
UPDATE "cells" SET "label" = left("cells"."label", 52) || ' (' || d.n || ')'
FROM (SELECT "id", row_number() OVER (PARTITION BY "pack_id", lower("label") ORDER BY "created_at", "id") AS n FROM "cells") AS d
WHERE d."id" = "cells"."id" AND d.n > 1;--> statement-breakpoint
CREATE UNIQUE INDEX "cells_pack_label_lower_key" ON "cells" USING btree ("pack_id",lower("label"));--> statement-breakpoint
ALTER TABLE "invitations" ADD CONSTRAINT "invitations_email_length" CHECK (char_length("invitations"."email") between 1 and 254);--> statement-breakpoint
ALTER TABLE "users" ADD CONSTRAINT "users_email_length" CHECK (char_length("users"."email") between 1 and 254);--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_name_length" CHECK (char_length("cell_specs"."name") between 1 and 80);--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_burst_seconds" CHECK ("cell_specs"."max_burst_seconds" is null or "cell_specs"."max_burst_seconds" between 1 and 3600);--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_currents" CHECK ("cell_specs"."max_continuous_amps" > 0 and "cell_specs"."max_continuous_amps" <= 5000 and "cell_specs"."max_charge_amps" > 0 and "cell_specs"."max_charge_amps" <= 5000 and ("cell_specs"."max_burst_amps" is null or ("cell_specs"."max_burst_amps" >= "cell_specs"."max_continuous_amps" and "cell_specs"."max_burst_amps" <= 10000)));--> statement-breakpoint
ALTER TABLE "cell_specs" ADD CONSTRAINT "cell_specs_resistance" CHECK ("cell_specs"."resistance_milliohms" is null or ("cell_specs"."resistance_milliohms" > 0 and "cell_specs"."resistance_milliohms" <= 10000));--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_name_length" CHECK (char_length("chemistry_profiles"."name") between 1 and 80);--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_source_length" CHECK (char_length("chemistry_profiles"."source") <= 500);--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_discharge_temps" CHECK ("chemistry_profiles"."discharge_temp_min_c" >= -40 and "chemistry_profiles"."discharge_temp_max_c" <= 100);--> statement-breakpoint
ALTER TABLE "chemistry_profiles" ADD CONSTRAINT "chemistry_profiles_rest_curve" CHECK (jsonb_typeof("chemistry_profiles"."rest_curve") = 'array' and jsonb_array_length("chemistry_profiles"."rest_curve") between 2 and 60);--> statement-breakpoint
ALTER TABLE "pack_groups" ADD CONSTRAINT "pack_groups_index" CHECK ("pack_groups"."index" between 1 and 400);--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_text_lengths" CHECK (char_length("packs"."name") between 1 and 80 and char_length("packs"."measured_peak_note") <= 500 and char_length("packs"."notes") <= 5000);--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_peak" CHECK ("packs"."measured_peak_amps" is null or ("packs"."measured_peak_amps" >= 0 and "packs"."measured_peak_amps" <= 100000));--> statement-breakpoint
ALTER TABLE "charger_channels" ADD CONSTRAINT "charger_channels_name_length" CHECK (char_length("charger_channels"."name") <= 40);--> statement-breakpoint
ALTER TABLE "charger_channels" ADD CONSTRAINT "charger_channels_position" CHECK ("charger_channels"."position" between 1 and 16);--> statement-breakpoint
ALTER TABLE "charger_channels" ADD CONSTRAINT "charger_channels_watts" CHECK ("charger_channels"."max_watts" is null or ("charger_channels"."max_watts" > 0 and "charger_channels"."max_watts" <= 100000));--> statement-breakpoint
ALTER TABLE "charger_channels" ADD CONSTRAINT "charger_channels_balance" CHECK ("charger_channels"."balance_amps" is null or ("charger_channels"."balance_amps" > 0 and "charger_channels"."balance_amps" <= 50));--> statement-breakpoint
ALTER TABLE "chargers" ADD CONSTRAINT "chargers_text_lengths" CHECK (char_length("chargers"."name") between 1 and 80 and char_length("chargers"."notes") <= 2000);
