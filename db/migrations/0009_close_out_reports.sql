CREATE TABLE `close_out_reports` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`closure_id` text NOT NULL,
	`signed_off_at` text NOT NULL,
	`sha256` text NOT NULL,
	`storage_key` text NOT NULL,
	`size` integer NOT NULL,
	`created_at` text NOT NULL,
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `close_out_reports_sign_off` ON `close_out_reports` (`closure_id`,`signed_off_at`);--> statement-breakpoint
CREATE INDEX `close_out_reports_sha256` ON `close_out_reports` (`sha256`);