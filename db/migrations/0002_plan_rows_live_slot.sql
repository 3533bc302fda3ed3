DROP INDEX `plan_rows_tray_slot`;--> statement-breakpoint
CREATE UNIQUE INDEX `plan_rows_tray_slot_live` ON `plan_rows` (`tray_id`,`slot`) WHERE "plan_rows"."deleted" = 0;