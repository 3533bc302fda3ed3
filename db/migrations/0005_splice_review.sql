ALTER TABLE `splices` ADD `review_reason` text;--> statement-breakpoint
ALTER TABLE `splices` ADD `reviewed_by` text REFERENCES users(id);--> statement-breakpoint
ALTER TABLE `splices` ADD `reviewed_at` text;