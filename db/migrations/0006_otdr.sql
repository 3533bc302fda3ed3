CREATE TABLE `loss_budget_settings` (
	`project_id` text PRIMARY KEY NOT NULL,
	`attenuation_db_per_km` real,
	`splice_loss_db` real,
	`connector_pair_loss_db` real,
	`margin_db` real,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `otdr_events` (
	`id` text PRIMARY KEY NOT NULL,
	`trace_id` text NOT NULL,
	`row` integer NOT NULL,
	`distance_m` real NOT NULL,
	`from_a_m` real NOT NULL,
	`loss_db` real,
	`reflectance_db` real,
	`kind` text NOT NULL,
	`match` text NOT NULL,
	`splice_id` text,
	`closure_id` text,
	`route_position_m` real,
	`after_closure_id` text,
	`before_closure_id` text,
	`on_cable_id` text,
	FOREIGN KEY (`trace_id`) REFERENCES `otdr_traces`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`splice_id`) REFERENCES `splices`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`after_closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`before_closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`on_cable_id`) REFERENCES `cables`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `otdr_events_trace` ON `otdr_events` (`trace_id`);--> statement-breakpoint
CREATE INDEX `otdr_events_splice` ON `otdr_events` (`splice_id`);--> statement-breakpoint
CREATE INDEX `otdr_events_unmatched` ON `otdr_events` (`match`,`on_cable_id`);--> statement-breakpoint
CREATE TABLE `otdr_imports` (
	`id` text PRIMARY KEY NOT NULL,
	`project_id` text NOT NULL,
	`file_name` text NOT NULL,
	`sha256` text NOT NULL,
	`imported_by` text NOT NULL,
	`imported_at` text NOT NULL,
	`trace_count` integer NOT NULL,
	`event_count` integer NOT NULL,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`imported_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `otdr_imports_project_sha` ON `otdr_imports` (`project_id`,`sha256`);--> statement-breakpoint
CREATE INDEX `otdr_imports_project_time` ON `otdr_imports` (`project_id`,`imported_at`);--> statement-breakpoint
CREATE TABLE `otdr_splice_results` (
	`splice_id` text NOT NULL,
	`wavelength_nm` integer NOT NULL,
	`closure_id` text NOT NULL,
	`ab_db` real,
	`ba_db` real,
	`kind` text NOT NULL,
	`average_db` real,
	`ab_event_id` text,
	`ba_event_id` text,
	`updated_at` text NOT NULL,
	PRIMARY KEY(`splice_id`, `wavelength_nm`),
	FOREIGN KEY (`splice_id`) REFERENCES `splices`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`closure_id`) REFERENCES `closures`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`ab_event_id`) REFERENCES `otdr_events`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`ba_event_id`) REFERENCES `otdr_events`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `otdr_splice_results_closure` ON `otdr_splice_results` (`closure_id`);--> statement-breakpoint
CREATE TABLE `otdr_traces` (
	`id` text PRIMARY KEY NOT NULL,
	`import_id` text NOT NULL,
	`project_id` text NOT NULL,
	`cable_id` text NOT NULL,
	`fiber` integer NOT NULL,
	`direction` text NOT NULL,
	`wavelength_nm` integer NOT NULL,
	`fiber_length_m` real NOT NULL,
	`end_to_end_db` real,
	`path_cable_id` text NOT NULL,
	`path_fiber` integer NOT NULL,
	FOREIGN KEY (`import_id`) REFERENCES `otdr_imports`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`cable_id`) REFERENCES `cables`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`path_cable_id`) REFERENCES `cables`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `otdr_traces_import` ON `otdr_traces` (`import_id`);--> statement-breakpoint
CREATE INDEX `otdr_traces_path` ON `otdr_traces` (`project_id`,`path_cable_id`,`path_fiber`,`wavelength_nm`);