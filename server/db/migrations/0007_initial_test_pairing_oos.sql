CREATE TABLE `notifications` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`user_id` bigint unsigned NOT NULL,
	`kind` varchar(32) NOT NULL,
	`text` varchar(500) NOT NULL,
	`link` varchar(200) NOT NULL,
	`study_id` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`read_at` datetime(3),
	CONSTRAINT `notifications_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `oos_investigations` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`observation_id` bigint unsigned NOT NULL,
	`sample_id` bigint unsigned NOT NULL,
	`checkpoint_id` bigint unsigned NOT NULL,
	`study_attribute_id` bigint unsigned NOT NULL,
	`failed_value` json NOT NULL,
	`failed_message` varchar(500) NOT NULL,
	`opened_by` bigint unsigned NOT NULL,
	`opened_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`bench_step` enum('unconfirmed','remeasured','confirmed') NOT NULL DEFAULT 'unconfirmed',
	`remeasure_value` json,
	`remeasure_method` json,
	`remeasure_verdict` enum('pass','fail','no_criterion','needs_baseline','not_done'),
	`remeasured_by` bigint unsigned,
	`remeasured_at` datetime(3),
	`bench_comment` text,
	`confirmed_by` bigint unsigned,
	`confirmed_at` datetime(3),
	`status` enum('open','closed') NOT NULL DEFAULT 'open',
	`checks` json,
	`conclusion` enum('confirmed','invalidated'),
	`conclusion_reason` text,
	`retest_value` json,
	`retest_verdict` enum('pass','fail','no_criterion','needs_baseline','not_done'),
	`closed_by` bigint unsigned,
	`closed_at` datetime(3),
	CONSTRAINT `oos_investigations_id` PRIMARY KEY(`id`),
	CONSTRAINT `oos_observation_uq` UNIQUE(`observation_id`)
);
--> statement-breakpoint
ALTER TABLE `amendments` MODIFY COLUMN `kind` enum('add_checkpoint','end_condition','pair_control','cancel','other') NOT NULL;--> statement-breakpoint
ALTER TABLE `checkpoints` MODIFY COLUMN `study_condition_id` bigint unsigned;--> statement-breakpoint
ALTER TABLE `samples` MODIFY COLUMN `study_condition_id` bigint unsigned;--> statement-breakpoint
ALTER TABLE `observation_revisions` MODIFY COLUMN `change` enum('correction','void','invalidated') NOT NULL;--> statement-breakpoint
ALTER TABLE `checkpoints` ADD `kind` enum('initial','pull','extra_day0') DEFAULT 'pull' NOT NULL;--> statement-breakpoint
ALTER TABLE `checkpoints` ADD `control_checkpoint_id` bigint unsigned;--> statement-breakpoint
ALTER TABLE `study_conditions` ADD `pair_control` boolean DEFAULT true NOT NULL;--> statement-breakpoint
ALTER TABLE `study_conditions` ADD `pairing_off_reason` text;--> statement-breakpoint
ALTER TABLE `notifications` ADD CONSTRAINT `notifications_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `notifications` ADD CONSTRAINT `notifications_user_id_users_id_fk` FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_observation_id_observations_id_fk` FOREIGN KEY (`observation_id`) REFERENCES `observations`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_sample_id_samples_id_fk` FOREIGN KEY (`sample_id`) REFERENCES `samples`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_checkpoint_id_checkpoints_id_fk` FOREIGN KEY (`checkpoint_id`) REFERENCES `checkpoints`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_study_attribute_id_study_attributes_id_fk` FOREIGN KEY (`study_attribute_id`) REFERENCES `study_attributes`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_opened_by_users_id_fk` FOREIGN KEY (`opened_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_remeasured_by_users_id_fk` FOREIGN KEY (`remeasured_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_confirmed_by_users_id_fk` FOREIGN KEY (`confirmed_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `oos_investigations` ADD CONSTRAINT `oos_investigations_closed_by_users_id_fk` FOREIGN KEY (`closed_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `notifications_user_idx` ON `notifications` (`user_id`,`read_at`,`created_at`);--> statement-breakpoint
CREATE INDEX `oos_study_idx` ON `oos_investigations` (`lab_id`,`study_id`,`status`);--> statement-breakpoint
CREATE INDEX `checkpoints_control_idx` ON `checkpoints` (`control_checkpoint_id`);