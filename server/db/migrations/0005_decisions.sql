CREATE TABLE `decisions` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`variant_id` bigint unsigned NOT NULL,
	`submission_id` bigint unsigned,
	`outcome` enum('released','released_with_conditions','not_released','continue_testing') NOT NULL,
	`conditions_text` varchar(1000),
	`shelf_life_months` int,
	`pao_months` int,
	`label_rule` varchar(32),
	`label_text` text,
	`comment` text,
	`signed_by` bigint unsigned NOT NULL,
	`signer_name` varchar(120) NOT NULL,
	`signed_at` datetime(3) NOT NULL,
	`meaning` varchar(64) NOT NULL,
	`data_hash` char(64) NOT NULL,
	`supersedes_id` bigint unsigned,
	`supersede_reason` text,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `decisions_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `submissions` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`summary` text NOT NULL,
	`proposals` json NOT NULL,
	`open_checkpoints_reason` text,
	`submitted_by` bigint unsigned NOT NULL,
	`submitted_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `submissions_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
ALTER TABLE `labs` ADD `bar_self_approval` boolean DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE `decisions` ADD CONSTRAINT `decisions_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `decisions` ADD CONSTRAINT `decisions_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `decisions` ADD CONSTRAINT `decisions_variant_id_variants_id_fk` FOREIGN KEY (`variant_id`) REFERENCES `variants`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `decisions` ADD CONSTRAINT `decisions_signed_by_users_id_fk` FOREIGN KEY (`signed_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `submissions` ADD CONSTRAINT `submissions_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `submissions` ADD CONSTRAINT `submissions_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `submissions` ADD CONSTRAINT `submissions_submitted_by_users_id_fk` FOREIGN KEY (`submitted_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `decisions_study_idx` ON `decisions` (`lab_id`,`study_id`,`variant_id`);--> statement-breakpoint
CREATE INDEX `submissions_study_idx` ON `submissions` (`lab_id`,`study_id`);