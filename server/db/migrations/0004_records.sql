CREATE TABLE `observation_revisions` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`observation_id` bigint unsigned NOT NULL,
	`version` int NOT NULL,
	`value_num` double,
	`value_text` varchar(2000),
	`value_bool` boolean,
	`method` json,
	`verdict` enum('pass','fail','no_criterion','needs_baseline','not_done') NOT NULL,
	`not_done_reason` text,
	`recorded_by` bigint unsigned NOT NULL,
	`recorded_at` datetime(3) NOT NULL,
	`change` enum('correction','void') NOT NULL,
	`changed_by` bigint unsigned NOT NULL,
	`changed_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`reason` text NOT NULL,
	CONSTRAINT `observation_revisions_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `photos` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`sample_id` bigint unsigned NOT NULL,
	`checkpoint_id` bigint unsigned NOT NULL,
	`stored_name` varchar(80) NOT NULL,
	`thumb_name` varchar(80) NOT NULL,
	`mime` enum('image/jpeg','image/png','image/webp') NOT NULL,
	`bytes` int NOT NULL,
	`width` int NOT NULL,
	`height` int NOT NULL,
	`original_name` varchar(200) NOT NULL,
	`caption` varchar(200),
	`uploaded_by` bigint unsigned NOT NULL,
	`uploaded_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `photos_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
ALTER TABLE `audit_log` ADD `study_id` bigint unsigned;--> statement-breakpoint
ALTER TABLE `observation_revisions` ADD CONSTRAINT `observation_revisions_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `observation_revisions` ADD CONSTRAINT `observation_revisions_observation_id_observations_id_fk` FOREIGN KEY (`observation_id`) REFERENCES `observations`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `observation_revisions` ADD CONSTRAINT `observation_revisions_changed_by_users_id_fk` FOREIGN KEY (`changed_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photos` ADD CONSTRAINT `photos_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photos` ADD CONSTRAINT `photos_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photos` ADD CONSTRAINT `photos_sample_id_samples_id_fk` FOREIGN KEY (`sample_id`) REFERENCES `samples`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photos` ADD CONSTRAINT `photos_checkpoint_id_checkpoints_id_fk` FOREIGN KEY (`checkpoint_id`) REFERENCES `checkpoints`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photos` ADD CONSTRAINT `photos_uploaded_by_users_id_fk` FOREIGN KEY (`uploaded_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `revisions_observation_idx` ON `observation_revisions` (`observation_id`,`version`);--> statement-breakpoint
CREATE INDEX `photos_sample_idx` ON `photos` (`lab_id`,`sample_id`,`checkpoint_id`);--> statement-breakpoint
CREATE INDEX `photos_study_idx` ON `photos` (`study_id`);--> statement-breakpoint
CREATE INDEX `audit_study_idx` ON `audit_log` (`lab_id`,`study_id`,`at`);