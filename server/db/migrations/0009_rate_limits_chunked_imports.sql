CREATE TABLE `rate_limits` (
	`key_hash` char(64) NOT NULL,
	`hits` int unsigned NOT NULL,
	`reset_at` datetime(3) NOT NULL,
	CONSTRAINT `rate_limits_key_hash` PRIMARY KEY(`key_hash`)
);
--> statement-breakpoint
ALTER TABLE `chamber_logs` ADD `import_id` varchar(36);--> statement-breakpoint
ALTER TABLE `chamber_logs` ADD `import_state` enum('importing','complete') DEFAULT 'complete' NOT NULL;--> statement-breakpoint
ALTER TABLE `chamber_logs` ADD CONSTRAINT `chamber_logs_import_uq` UNIQUE(`lab_id`,`import_id`);--> statement-breakpoint
CREATE INDEX `rate_limits_reset_idx` ON `rate_limits` (`reset_at`);