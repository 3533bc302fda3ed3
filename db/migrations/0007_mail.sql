CREATE TABLE `mail_log` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`kind` text NOT NULL,
	`key` text NOT NULL,
	`recipients` text NOT NULL,
	`subject` text NOT NULL,
	`state` text NOT NULL,
	`attempts` integer NOT NULL,
	`error` text,
	`created_at` text NOT NULL,
	`sent_at` text
);
--> statement-breakpoint
CREATE UNIQUE INDEX `mail_log_kind_key` ON `mail_log` (`kind`,`key`);--> statement-breakpoint
CREATE INDEX `mail_log_state` ON `mail_log` (`state`);--> statement-breakpoint
CREATE TABLE `mail_tokens` (
	`id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`purpose` text NOT NULL,
	`token_hash` text NOT NULL,
	`created_at` text NOT NULL,
	`expires_at` text NOT NULL,
	`used_at` text,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `mail_tokens_hash` ON `mail_tokens` (`token_hash`);--> statement-breakpoint
CREATE INDEX `mail_tokens_user` ON `mail_tokens` (`user_id`);