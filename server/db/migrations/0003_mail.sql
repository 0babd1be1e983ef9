CREATE TABLE `invitations` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`email` varchar(254) NOT NULL,
	`role` enum('technician','formulator','owner') NOT NULL,
	`token_hash` char(64) NOT NULL,
	`invited_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`expires_at` datetime(3) NOT NULL,
	`accepted_at` datetime(3),
	`accepted_user_id` bigint unsigned,
	`revoked_at` datetime(3),
	CONSTRAINT `invitations_id` PRIMARY KEY(`id`),
	CONSTRAINT `invitations_token_uq` UNIQUE(`token_hash`)
);
--> statement-breakpoint
CREATE TABLE `mail_outbox` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned,
	`to_address` varchar(1000) NOT NULL,
	`from_address` varchar(300) NOT NULL DEFAULT '',
	`subject` varchar(500) NOT NULL DEFAULT '',
	`text` mediumtext,
	`html` mediumtext,
	`message_id` varchar(300),
	`raw_size` int unsigned NOT NULL,
	`received_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `mail_outbox_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `password_resets` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`user_id` bigint unsigned NOT NULL,
	`token_hash` char(64) NOT NULL,
	`request_ip` varchar(64),
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`expires_at` datetime(3) NOT NULL,
	`used_at` datetime(3),
	CONSTRAINT `password_resets_id` PRIMARY KEY(`id`),
	CONSTRAINT `password_resets_token_uq` UNIQUE(`token_hash`)
);
--> statement-breakpoint
CREATE TABLE `reminders` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`user_id` bigint unsigned NOT NULL,
	`kind` varchar(32) NOT NULL,
	`lab_local_date` date NOT NULL,
	`status` enum('claimed','sent','failed','skipped') NOT NULL,
	`claim_token` char(32) NOT NULL,
	`attempts` int unsigned NOT NULL DEFAULT 1,
	`claimed_at` datetime(3) NOT NULL,
	`sent_at` datetime(3),
	`message_id` varchar(300),
	`last_error` text,
	CONSTRAINT `reminders_id` PRIMARY KEY(`id`),
	CONSTRAINT `reminders_once_uq` UNIQUE(`user_id`,`kind`,`lab_local_date`)
);
--> statement-breakpoint
ALTER TABLE `users` ADD `reminders_enabled` boolean DEFAULT true NOT NULL;--> statement-breakpoint
ALTER TABLE `invitations` ADD CONSTRAINT `invitations_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `invitations` ADD CONSTRAINT `invitations_invited_by_users_id_fk` FOREIGN KEY (`invited_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `invitations` ADD CONSTRAINT `invitations_accepted_user_id_users_id_fk` FOREIGN KEY (`accepted_user_id`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `mail_outbox` ADD CONSTRAINT `mail_outbox_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `password_resets` ADD CONSTRAINT `password_resets_user_id_users_id_fk` FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `reminders` ADD CONSTRAINT `reminders_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `reminders` ADD CONSTRAINT `reminders_user_id_users_id_fk` FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `invitations_lab_email_idx` ON `invitations` (`lab_id`,`email`);--> statement-breakpoint
CREATE INDEX `mail_outbox_lab_idx` ON `mail_outbox` (`lab_id`,`received_at`);--> statement-breakpoint
CREATE INDEX `password_resets_user_idx` ON `password_resets` (`user_id`,`created_at`);--> statement-breakpoint
CREATE INDEX `reminders_status_idx` ON `reminders` (`status`,`lab_local_date`);