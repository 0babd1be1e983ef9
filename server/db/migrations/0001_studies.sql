CREATE TABLE `amendments` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`kind` enum('add_checkpoint','end_condition','cancel','other') NOT NULL,
	`reason` text NOT NULL,
	`details` json,
	`created_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `amendments_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `attributes` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`code` varchar(32) NOT NULL,
	`name` varchar(80) NOT NULL,
	`kind` enum('measured','graded','compared','pass_fail','note') NOT NULL,
	`unit` varchar(24),
	`decimals` int NOT NULL DEFAULT 2,
	`scale` json,
	`method_fields` json,
	`physical_min` double,
	`physical_max` double,
	`default_criterion` json,
	`description` text,
	`built_in` boolean NOT NULL DEFAULT false,
	`active` boolean NOT NULL DEFAULT true,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `attributes_id` PRIMARY KEY(`id`),
	CONSTRAINT `attributes_lab_code_uq` UNIQUE(`lab_id`,`code`)
);
--> statement-breakpoint
CREATE TABLE `checkpoints` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`study_condition_id` bigint unsigned NOT NULL,
	`offset_unit` enum('day','week','month','cycle') NOT NULL,
	`offset_n` int NOT NULL,
	`label` varchar(40) NOT NULL,
	`due_date` date NOT NULL,
	`window_before` int NOT NULL,
	`window_after` int NOT NULL,
	`status` enum('open','done','missed') NOT NULL DEFAULT 'open',
	`missed_reason` text,
	`closed_at` datetime(3),
	`closed_by` bigint unsigned,
	`amendment_id` bigint unsigned,
	CONSTRAINT `checkpoints_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `observations` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`sample_id` bigint unsigned NOT NULL,
	`checkpoint_id` bigint unsigned NOT NULL,
	`study_attribute_id` bigint unsigned NOT NULL,
	`value_num` double,
	`value_text` varchar(2000),
	`value_bool` boolean,
	`method` json,
	`verdict` enum('pass','fail','no_criterion','needs_baseline','not_done') NOT NULL,
	`not_done_reason` text,
	`recorded_by` bigint unsigned NOT NULL,
	`recorded_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`version` int NOT NULL DEFAULT 1,
	`voided` boolean NOT NULL DEFAULT false,
	CONSTRAINT `observations_id` PRIMARY KEY(`id`),
	CONSTRAINT `observations_cell_uq` UNIQUE(`sample_id`,`checkpoint_id`,`study_attribute_id`)
);
--> statement-breakpoint
CREATE TABLE `samples` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`batch_id` bigint unsigned NOT NULL,
	`study_condition_id` bigint unsigned NOT NULL,
	`code` varchar(12) NOT NULL,
	`replicate` int NOT NULL DEFAULT 1,
	`label_order` int NOT NULL,
	CONSTRAINT `samples_id` PRIMARY KEY(`id`),
	CONSTRAINT `samples_lab_code_uq` UNIQUE(`lab_id`,`code`)
);
--> statement-breakpoint
CREATE TABLE `studies` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`product_id` bigint unsigned NOT NULL,
	`title` varchar(160) NOT NULL,
	`status` enum('draft','running','in_review','decided','cancelled') NOT NULL DEFAULT 'draft',
	`start_date` date NOT NULL,
	`responsible_id` bigint unsigned,
	`samples_per_cell` int NOT NULL DEFAULT 1,
	`container_description` varchar(200) NOT NULL DEFAULT '',
	`fill_grams` double,
	`notes` text,
	`started_at` datetime(3),
	`started_by` bigint unsigned,
	`cancelled_reason` text,
	`created_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`updated_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `studies_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `study_attributes` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`attribute_id` bigint unsigned NOT NULL,
	`position` int NOT NULL,
	`criterion` json NOT NULL,
	CONSTRAINT `study_attributes_id` PRIMARY KEY(`id`),
	CONSTRAINT `study_attributes_uq` UNIQUE(`study_id`,`attribute_id`)
);
--> statement-breakpoint
CREATE TABLE `study_batches` (
	`study_id` bigint unsigned NOT NULL,
	`batch_id` bigint unsigned NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	CONSTRAINT `study_batches_study_id_batch_id_pk` PRIMARY KEY(`study_id`,`batch_id`)
);
--> statement-breakpoint
CREATE TABLE `study_conditions` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`study_id` bigint unsigned NOT NULL,
	`condition_id` bigint unsigned NOT NULL,
	`role` enum('control','real_time','accelerated','stress') NOT NULL,
	`position` int NOT NULL,
	`offsets` json NOT NULL,
	`template` varchar(32),
	`ended_on` date,
	`ended_reason` text,
	CONSTRAINT `study_conditions_id` PRIMARY KEY(`id`),
	CONSTRAINT `study_conditions_uq` UNIQUE(`study_id`,`condition_id`)
);
--> statement-breakpoint
ALTER TABLE `amendments` ADD CONSTRAINT `amendments_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `amendments` ADD CONSTRAINT `amendments_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `amendments` ADD CONSTRAINT `amendments_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `attributes` ADD CONSTRAINT `attributes_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `checkpoints` ADD CONSTRAINT `checkpoints_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `checkpoints` ADD CONSTRAINT `checkpoints_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `checkpoints` ADD CONSTRAINT `checkpoints_study_condition_id_study_conditions_id_fk` FOREIGN KEY (`study_condition_id`) REFERENCES `study_conditions`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `observations` ADD CONSTRAINT `observations_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `observations` ADD CONSTRAINT `observations_sample_id_samples_id_fk` FOREIGN KEY (`sample_id`) REFERENCES `samples`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `observations` ADD CONSTRAINT `observations_checkpoint_id_checkpoints_id_fk` FOREIGN KEY (`checkpoint_id`) REFERENCES `checkpoints`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `observations` ADD CONSTRAINT `observations_study_attribute_id_study_attributes_id_fk` FOREIGN KEY (`study_attribute_id`) REFERENCES `study_attributes`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `samples` ADD CONSTRAINT `samples_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `samples` ADD CONSTRAINT `samples_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `samples` ADD CONSTRAINT `samples_batch_id_batches_id_fk` FOREIGN KEY (`batch_id`) REFERENCES `batches`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `samples` ADD CONSTRAINT `samples_study_condition_id_study_conditions_id_fk` FOREIGN KEY (`study_condition_id`) REFERENCES `study_conditions`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `studies` ADD CONSTRAINT `studies_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `studies` ADD CONSTRAINT `studies_product_id_products_id_fk` FOREIGN KEY (`product_id`) REFERENCES `products`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `studies` ADD CONSTRAINT `studies_responsible_id_users_id_fk` FOREIGN KEY (`responsible_id`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `studies` ADD CONSTRAINT `studies_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_attributes` ADD CONSTRAINT `study_attributes_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_attributes` ADD CONSTRAINT `study_attributes_attribute_id_attributes_id_fk` FOREIGN KEY (`attribute_id`) REFERENCES `attributes`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_batches` ADD CONSTRAINT `study_batches_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_batches` ADD CONSTRAINT `study_batches_batch_id_batches_id_fk` FOREIGN KEY (`batch_id`) REFERENCES `batches`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_conditions` ADD CONSTRAINT `study_conditions_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_conditions` ADD CONSTRAINT `study_conditions_condition_id_storage_conditions_id_fk` FOREIGN KEY (`condition_id`) REFERENCES `storage_conditions`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `amendments_study_idx` ON `amendments` (`study_id`);--> statement-breakpoint
CREATE INDEX `checkpoints_lab_due_idx` ON `checkpoints` (`lab_id`,`status`,`due_date`);--> statement-breakpoint
CREATE INDEX `checkpoints_study_idx` ON `checkpoints` (`study_id`,`study_condition_id`,`due_date`);--> statement-breakpoint
CREATE INDEX `observations_checkpoint_idx` ON `observations` (`checkpoint_id`);--> statement-breakpoint
CREATE INDEX `observations_study_idx` ON `observations` (`lab_id`,`study_id`);--> statement-breakpoint
CREATE INDEX `samples_study_idx` ON `samples` (`study_id`,`study_condition_id`);--> statement-breakpoint
CREATE INDEX `studies_lab_status_idx` ON `studies` (`lab_id`,`status`);