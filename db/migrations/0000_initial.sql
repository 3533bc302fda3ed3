CREATE TABLE `audit_log` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`at` text NOT NULL,
	`user_id` text,
	`client_id` text,
	`entity` text NOT NULL,
	`entity_id` text NOT NULL,
	`field` text,
	`old_value` text,
	`new_value` text,
	`outcome` text NOT NULL,
	`mutation_seq` integer,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `audit_log_entity` ON `audit_log` (`entity`,`entity_id`,`id`);--> statement-breakpoint
CREATE INDEX `audit_log_user` ON `audit_log` (`user_id`,`id`);--> statement-breakpoint
CREATE TABLE `closure_assignments` (
	`closure_id` text NOT NULL,
	`user_id` text NOT NULL,
	`position` integer NOT NULL,
	`assigned_by` text NOT NULL,
	`assigned_at` text NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	PRIMARY KEY(`closure_id`, `user_id`),
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`assigned_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `closure_assignments_user` ON `closure_assignments` (`user_id`,`position`);--> statement-breakpoint
CREATE INDEX `closure_assignments_server_seq` ON `closure_assignments` (`server_seq`);--> statement-breakpoint
CREATE TABLE `closures` (
	`id` text PRIMARY KEY NOT NULL,
	`project_id` text NOT NULL,
	`label` text NOT NULL,
	`kind` text NOT NULL,
	`lat` real,
	`lon` real,
	`route_position_m` real,
	`roadside` integer DEFAULT false NOT NULL,
	`crew_id` text,
	`state` text DEFAULT 'planned' NOT NULL,
	`signed_off_by` text,
	`signed_off_at` text,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`crew_id`) REFERENCES `crews`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`signed_off_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `closures_project_label` ON `closures` (`project_id`,`label`,`id`);--> statement-breakpoint
CREATE INDEX `closures_project_route` ON `closures` (`project_id`,`route_position_m`,`id`);--> statement-breakpoint
CREATE INDEX `closures_project_state` ON `closures` (`project_id`,`state`) WHERE "closures"."deleted" = 0;--> statement-breakpoint
CREATE INDEX `closures_crew` ON `closures` (`crew_id`);--> statement-breakpoint
CREATE INDEX `closures_server_seq` ON `closures` (`server_seq`);--> statement-breakpoint
CREATE TABLE `plan_rows` (
	`id` text PRIMARY KEY NOT NULL,
	`closure_id` text NOT NULL,
	`tray_id` text NOT NULL,
	`slot` integer NOT NULL,
	`cable_a_id` text NOT NULL,
	`fiber_a` integer NOT NULL,
	`cable_b_id` text NOT NULL,
	`fiber_b` integer NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`tray_id`) REFERENCES `trays`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`cable_a_id`) REFERENCES `cables`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`cable_b_id`) REFERENCES `cables`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `plan_rows_tray_slot` ON `plan_rows` (`tray_id`,`slot`);--> statement-breakpoint
CREATE INDEX `plan_rows_closure` ON `plan_rows` (`closure_id`);--> statement-breakpoint
CREATE INDEX `plan_rows_server_seq` ON `plan_rows` (`server_seq`);--> statement-breakpoint
CREATE TABLE `trays` (
	`id` text PRIMARY KEY NOT NULL,
	`closure_id` text NOT NULL,
	`number` integer NOT NULL,
	`capacity` integer NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `trays_closure_number` ON `trays` (`closure_id`,`number`);--> statement-breakpoint
CREATE INDEX `trays_server_seq` ON `trays` (`server_seq`);--> statement-breakpoint
CREATE TABLE `notes` (
	`id` text PRIMARY KEY NOT NULL,
	`entity` text NOT NULL,
	`entity_id` text NOT NULL,
	`author_id` text NOT NULL,
	`body` text NOT NULL,
	`created_at` text NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	FOREIGN KEY (`author_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `notes_entity` ON `notes` (`entity`,`entity_id`);--> statement-breakpoint
CREATE INDEX `notes_server_seq` ON `notes` (`server_seq`);--> statement-breakpoint
CREATE TABLE `photo_links` (
	`id` text PRIMARY KEY NOT NULL,
	`sha256` text NOT NULL,
	`entity` text NOT NULL,
	`entity_id` text NOT NULL,
	`added_by` text NOT NULL,
	`created_at` text NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	FOREIGN KEY (`added_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `photo_links_entity` ON `photo_links` (`entity`,`entity_id`);--> statement-breakpoint
CREATE INDEX `photo_links_sha256` ON `photo_links` (`sha256`);--> statement-breakpoint
CREATE INDEX `photo_links_server_seq` ON `photo_links` (`server_seq`);--> statement-breakpoint
CREATE TABLE `photos` (
	`sha256` text PRIMARY KEY NOT NULL,
	`mime` text NOT NULL,
	`size` integer NOT NULL,
	`width` integer,
	`height` integer,
	`uploaded_by` text NOT NULL,
	`uploaded_at` text NOT NULL,
	`storage_key` text NOT NULL,
	FOREIGN KEY (`uploaded_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `crews` (
	`id` text PRIMARY KEY NOT NULL,
	`name` text NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL
);
--> statement-breakpoint
CREATE INDEX `crews_server_seq` ON `crews` (`server_seq`);--> statement-breakpoint
CREATE TABLE `refresh_tokens` (
	`id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`family_id` text NOT NULL,
	`token_hash` text NOT NULL,
	`created_at` text NOT NULL,
	`expires_at` text NOT NULL,
	`rotated_at` text,
	`revoked_at` text,
	`replaced_by` text,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `refresh_tokens_hash` ON `refresh_tokens` (`token_hash`);--> statement-breakpoint
CREATE INDEX `refresh_tokens_family` ON `refresh_tokens` (`family_id`);--> statement-breakpoint
CREATE INDEX `refresh_tokens_user` ON `refresh_tokens` (`user_id`);--> statement-breakpoint
CREATE TABLE `users` (
	`id` text PRIMARY KEY NOT NULL,
	`email` text NOT NULL,
	`name` text NOT NULL,
	`role` text NOT NULL,
	`crew_id` text,
	`password_hash` text NOT NULL,
	`active` integer DEFAULT true NOT NULL,
	`token_version` integer DEFAULT 0 NOT NULL,
	`created_at` text NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	FOREIGN KEY (`crew_id`) REFERENCES `crews`(`id`) ON UPDATE no action ON DELETE no action,
	CONSTRAINT "users_email_lowercase" CHECK("users"."email" = lower("users"."email"))
);
--> statement-breakpoint
CREATE UNIQUE INDEX `users_email` ON `users` (`email`);--> statement-breakpoint
CREATE INDEX `users_crew` ON `users` (`crew_id`);--> statement-breakpoint
CREATE INDEX `users_server_seq` ON `users` (`server_seq`);--> statement-breakpoint
CREATE TABLE `cables` (
	`id` text PRIMARY KEY NOT NULL,
	`project_id` text NOT NULL,
	`label` text NOT NULL,
	`fiber_count` integer NOT NULL,
	`construction` text NOT NULL,
	`fibers_per_unit` integer NOT NULL,
	`unit_counts` text,
	`ribbons_per_tube` integer,
	`colour_scheme` text DEFAULT 'tia598' NOT NULL,
	`fiber_type` text NOT NULL,
	`length_m` real NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `cables_project_label` ON `cables` (`project_id`,`label`);--> statement-breakpoint
CREATE INDEX `cables_server_seq` ON `cables` (`server_seq`);--> statement-breakpoint
CREATE TABLE `projects` (
	`id` text PRIMARY KEY NOT NULL,
	`code` text NOT NULL,
	`name` text NOT NULL,
	`limits` text NOT NULL,
	`photo_rules` text NOT NULL,
	`default_method` text DEFAULT 'single_fusion' NOT NULL,
	`otdr_tolerance_m` real NOT NULL,
	`disagreement_db` real NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL
);
--> statement-breakpoint
CREATE UNIQUE INDEX `projects_code` ON `projects` (`code`);--> statement-breakpoint
CREATE INDEX `projects_server_seq` ON `projects` (`server_seq`);--> statement-breakpoint
CREATE TABLE `splices` (
	`id` text PRIMARY KEY NOT NULL,
	`closure_id` text NOT NULL,
	`tray_id` text NOT NULL,
	`slot` integer NOT NULL,
	`cable_a_id` text NOT NULL,
	`fiber_a` integer NOT NULL,
	`cable_b_id` text NOT NULL,
	`fiber_b` integer NOT NULL,
	`method` text NOT NULL,
	`loss_db` real,
	`attempt` integer DEFAULT 1 NOT NULL,
	`resplice_reason` text,
	`resplice_note` text,
	`supersedes_id` text,
	`accept_reason` text,
	`notes` text DEFAULT '' NOT NULL,
	`spliced_at` text NOT NULL,
	`splicer_id` text NOT NULL,
	`client_id` text NOT NULL,
	`is_current` integer DEFAULT true NOT NULL,
	`flags` text DEFAULT '[]' NOT NULL,
	`review_state` text,
	`created_at` text NOT NULL,
	`server_seq` integer DEFAULT 0 NOT NULL,
	`deleted` integer DEFAULT false NOT NULL,
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`tray_id`) REFERENCES `trays`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`cable_a_id`) REFERENCES `cables`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`cable_b_id`) REFERENCES `cables`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`supersedes_id`) REFERENCES `splices`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`splicer_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `splices_closure_current` ON `splices` (`closure_id`,`is_current`);--> statement-breakpoint
CREATE INDEX `splices_closure_slot` ON `splices` (`closure_id`,`tray_id`,`slot`);--> statement-breakpoint
CREATE INDEX `splices_splicer_time` ON `splices` (`splicer_id`,`spliced_at`);--> statement-breakpoint
CREATE INDEX `splices_supersedes` ON `splices` (`supersedes_id`);--> statement-breakpoint
CREATE INDEX `splices_server_seq` ON `splices` (`server_seq`);--> statement-breakpoint
CREATE INDEX `splices_current_loss` ON `splices` (`closure_id`,`loss_db`) WHERE "splices"."is_current" = 1 AND "splices"."deleted" = 0;--> statement-breakpoint
CREATE TABLE `applied_mutations` (
	`client_id` text NOT NULL,
	`seq` integer NOT NULL,
	`name` text NOT NULL,
	`result` text NOT NULL,
	`applied_at` text NOT NULL,
	PRIMARY KEY(`client_id`, `seq`),
	FOREIGN KEY (`client_id`) REFERENCES `sync_clients`(`client_id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `change_seq` (
	`id` integer PRIMARY KEY NOT NULL,
	`value` integer DEFAULT 0 NOT NULL,
	CONSTRAINT "change_seq_single_row" CHECK("change_seq"."id" = 1)
);
--> statement-breakpoint
CREATE TABLE `rejected_mutations` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`client_id` text NOT NULL,
	`seq` integer NOT NULL,
	`user_id` text NOT NULL,
	`name` text NOT NULL,
	`args` text NOT NULL,
	`code` text NOT NULL,
	`message` text NOT NULL,
	`at` text NOT NULL,
	`resolved_at` text,
	FOREIGN KEY (`client_id`) REFERENCES `sync_clients`(`client_id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `rejected_mutations_client_seq` ON `rejected_mutations` (`client_id`,`seq`);--> statement-breakpoint
CREATE INDEX `rejected_mutations_open` ON `rejected_mutations` (`resolved_at`,`at`);--> statement-breakpoint
CREATE TABLE `sync_clients` (
	`client_id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`last_seq` integer DEFAULT 0 NOT NULL,
	`created_at` text NOT NULL,
	`last_seen_at` text NOT NULL,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `sync_clients_user` ON `sync_clients` (`user_id`);--> statement-breakpoint
CREATE TABLE `closure_totals` (
	`closure_id` text PRIMARY KEY NOT NULL,
	`project_id` text NOT NULL,
	`planned` integer DEFAULT 0 NOT NULL,
	`logged` integer DEFAULT 0 NOT NULL,
	`off_plan` integer DEFAULT 0 NOT NULL,
	`loss_count` integer DEFAULT 0 NOT NULL,
	`loss_sum` real DEFAULT 0 NOT NULL,
	`loss_max` real,
	`over_target` integer DEFAULT 0 NOT NULL,
	`over_maximum` integer DEFAULT 0 NOT NULL,
	`resplices` integer DEFAULT 0 NOT NULL,
	`mismatches` integer DEFAULT 0 NOT NULL,
	`photos` integer DEFAULT 0 NOT NULL,
	`last_activity_at` text,
	`completion_pct` real GENERATED ALWAYS AS (CASE WHEN planned > 0 THEN round(100.0 * logged / planned, 1) ELSE 0 END) VIRTUAL,
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `closure_totals_project_completion` ON `closure_totals` (`project_id`,`completion_pct`,`closure_id`);--> statement-breakpoint
CREATE INDEX `closure_totals_project_over_target` ON `closure_totals` (`project_id`,`over_target`,`closure_id`);--> statement-breakpoint
CREATE INDEX `closure_totals_project_activity` ON `closure_totals` (`project_id`,`last_activity_at`,`closure_id`);