-- A pack owner is a member of the pack's workshop, guaranteed by the database: naming a
-- non-member is refused, and a membership that goes (removal, or a user deleted) clears the
-- pack owner of that workshop's packs in the same statement. The application clears it too,
-- to say which packs lost their owner; this key closes the race between naming an owner and
-- removing that member. Written by hand: Drizzle's schema cannot express SET NULL on one column
-- of a composite key (PostgreSQL 15 can).
UPDATE "packs" SET "pack_owner_id" = NULL
WHERE "pack_owner_id" IS NOT NULL
	AND NOT EXISTS (
		SELECT 1 FROM "memberships" m
		WHERE m."workshop_id" = "packs"."workshop_id" AND m."user_id" = "packs"."pack_owner_id"
	);--> statement-breakpoint
ALTER TABLE "packs" ADD CONSTRAINT "packs_pack_owner_membership_fk"
	FOREIGN KEY ("workshop_id", "pack_owner_id") REFERENCES "public"."memberships"("workshop_id", "user_id")
	ON DELETE SET NULL ("pack_owner_id") ON UPDATE NO ACTION;
