-- The target of voltage_checks' same-pack key goes first (drizzle-kit put it last).
ALTER TABLE "cells" ADD CONSTRAINT "cells_id_pack_key" UNIQUE("id","pack_id");--> statement-breakpoint
CREATE TABLE "voltage_checks" (
	"id" text PRIMARY KEY NOT NULL,
	"workshop_id" text NOT NULL,
	"pack_id" text NOT NULL,
	"cell_id" text,
	"group_id" text,
	"volts" double precision NOT NULL,
	"measured_at" timestamp with time zone NOT NULL,
	"entered_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "voltage_checks_one_target" CHECK (("voltage_checks"."cell_id" is null) <> ("voltage_checks"."group_id" is null)),
	CONSTRAINT "voltage_checks_volts" CHECK ("voltage_checks"."volts" >= 0 and "voltage_checks"."volts" <= 5)
);
--> statement-breakpoint
ALTER TABLE "voltage_checks" ADD CONSTRAINT "voltage_checks_workshop_id_workshops_id_fk" FOREIGN KEY ("workshop_id") REFERENCES "public"."workshops"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "voltage_checks" ADD CONSTRAINT "voltage_checks_entered_by_users_id_fk" FOREIGN KEY ("entered_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "voltage_checks" ADD CONSTRAINT "voltage_checks_pack_same_workshop_fk" FOREIGN KEY ("pack_id","workshop_id") REFERENCES "public"."packs"("id","workshop_id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "voltage_checks" ADD CONSTRAINT "voltage_checks_cell_same_pack_fk" FOREIGN KEY ("cell_id","pack_id") REFERENCES "public"."cells"("id","pack_id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "voltage_checks" ADD CONSTRAINT "voltage_checks_group_same_pack_fk" FOREIGN KEY ("group_id","pack_id") REFERENCES "public"."pack_groups"("id","pack_id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "voltage_checks_pack_measured_idx" ON "voltage_checks" USING btree ("pack_id","measured_at");--> statement-breakpoint
CREATE INDEX "voltage_checks_cell_idx" ON "voltage_checks" USING btree ("cell_id");--> statement-breakpoint
CREATE INDEX "voltage_checks_group_idx" ON "voltage_checks" USING btree ("group_id");
