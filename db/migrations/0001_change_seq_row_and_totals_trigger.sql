-- Hand-written (drizzle-kit generate --custom): rows and triggers drizzle-kit does not model.
-- The single change_seq row that every write transaction increments (db/schema/sync.ts).
INSERT OR IGNORE INTO `change_seq` (`id`, `value`) VALUES (1, 0);
--> statement-breakpoint
-- Every closure has a totals row from the moment it exists, so the board's inner join never drops one.
-- A later migration that rebuilds `closures` drops this trigger and must create it again.
CREATE TRIGGER `closures_totals_row` AFTER INSERT ON `closures`
BEGIN
  INSERT OR IGNORE INTO `closure_totals` (`closure_id`, `project_id`) VALUES (NEW.`id`, NEW.`project_id`);
END;
