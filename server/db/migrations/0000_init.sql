CREATE TABLE `audit_log` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`user_id` bigint unsigned,
	`at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`action` varchar(32) NOT NULL,
	`entity` varchar(48) NOT NULL,
	`entity_id` varchar(64),
	`old_value` json,
	`new_value` json,
	`reason` text,
	CONSTRAINT `audit_log_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `labs` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`name` varchar(120) NOT NULL,
	`time_zone` varchar(64) NOT NULL DEFAULT 'UTC',
	`q10` decimal(4,2) NOT NULL DEFAULT 2,
	`reminder_hour` int NOT NULL DEFAULT 7,
	`date_format` varchar(16) NOT NULL DEFAULT 'YYYY-MM-DD',
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `labs_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `sessions` (
	`session_id` varchar(128) NOT NULL,
	`expires` int unsigned NOT NULL,
	`data` mediumtext,
	CONSTRAINT `sessions_session_id` PRIMARY KEY(`session_id`)
);
--> statement-breakpoint
CREATE TABLE `users` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`email` varchar(254) NOT NULL,
	`name` varchar(120) NOT NULL,
	`password_hash` varchar(100) NOT NULL,
	`role` enum('technician','formulator','owner') NOT NULL,
	`active` boolean NOT NULL DEFAULT true,
	`failed_sign_ins` int NOT NULL DEFAULT 0,
	`locked_until` datetime(3),
	`last_sign_in_at` datetime(3),
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `users_id` PRIMARY KEY(`id`),
	CONSTRAINT `users_email_uq` UNIQUE(`email`)
);
--> statement-breakpoint
ALTER TABLE `audit_log` ADD CONSTRAINT `audit_log_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `users` ADD CONSTRAINT `users_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `audit_lab_at_idx` ON `audit_log` (`lab_id`,`at`);--> statement-breakpoint
CREATE INDEX `audit_entity_idx` ON `audit_log` (`lab_id`,`entity`,`entity_id`);--> statement-breakpoint
CREATE INDEX `users_lab_idx` ON `users` (`lab_id`);