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
CREATE TABLE `batches` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`variant_id` bigint unsigned NOT NULL,
	`lot_code` varchar(40) NOT NULL,
	`made_on` date NOT NULL,
	`size_grams` decimal(10,2) NOT NULL,
	`packaging` varchar(200) NOT NULL,
	`fill_amount` decimal(8,2),
	`fill_unit` enum('g','mL'),
	`notes` text,
	`formula_snapshot` json NOT NULL,
	`created_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `batches_id` PRIMARY KEY(`id`),
	CONSTRAINT `batches_lab_lot_uq` UNIQUE(`lab_id`,`lot_code`)
);
--> statement-breakpoint
CREATE TABLE `formula_lines` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`variant_id` bigint unsigned NOT NULL,
	`position` int NOT NULL,
	`ingredient_id` bigint unsigned NOT NULL,
	`phase` varchar(24) NOT NULL DEFAULT 'A',
	`percent` decimal(8,4) NOT NULL,
	CONSTRAINT `formula_lines_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `ingredients` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`trade_name` varchar(120) NOT NULL,
	`inci_name` varchar(250) NOT NULL,
	`function` enum('emulsifier','preservative','antioxidant','fragrance','colorant','butter','oil','active','humectant','thickener','solvent','other') NOT NULL,
	`use_min_percent` decimal(7,4),
	`use_max_percent` decimal(7,4),
	`supplier` varchar(120),
	`notes` text,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `ingredients_id` PRIMARY KEY(`id`),
	CONSTRAINT `ingredients_lab_trade_uq` UNIQUE(`lab_id`,`trade_name`)
);
--> statement-breakpoint
CREATE TABLE `products` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`name` varchar(120) NOT NULL,
	`type` enum('oil_in_water','water_in_oil','anhydrous_balm','anhydrous_scrub','gel','oil','surfactant_wash','other') NOT NULL,
	`notes` text,
	`created_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`updated_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `products_id` PRIMARY KEY(`id`),
	CONSTRAINT `products_lab_name_uq` UNIQUE(`lab_id`,`name`)
);
--> statement-breakpoint
CREATE TABLE `variants` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`product_id` bigint unsigned NOT NULL,
	`code` varchar(16) NOT NULL,
	`name` varchar(160) NOT NULL,
	`notes` text,
	`derived_from_id` bigint unsigned,
	`created_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`updated_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `variants_id` PRIMARY KEY(`id`),
	CONSTRAINT `variants_product_code_uq` UNIQUE(`product_id`,`code`)
);
--> statement-breakpoint
CREATE TABLE `chamber_logs` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`condition_id` bigint unsigned NOT NULL,
	`file_name` varchar(200) NOT NULL,
	`source_unit` enum('C','F') NOT NULL,
	`reading_count` int NOT NULL,
	`first_at` datetime(3) NOT NULL,
	`last_at` datetime(3) NOT NULL,
	`summary` json NOT NULL,
	`uploaded_by` bigint unsigned,
	`uploaded_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `chamber_logs_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `chamber_readings` (
	`log_id` bigint unsigned NOT NULL,
	`seq` int NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`at` datetime(3) NOT NULL,
	`temp_c` double NOT NULL,
	`rh` double,
	CONSTRAINT `chamber_readings_log_id_seq_pk` PRIMARY KEY(`log_id`,`seq`)
);
--> statement-breakpoint
CREATE TABLE `storage_conditions` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`name` varchar(120) NOT NULL,
	`kind` enum('constant','cycling','light','mechanical') NOT NULL,
	`location` varchar(120) NOT NULL DEFAULT '',
	`is_control` boolean NOT NULL DEFAULT false,
	`preset` varchar(80),
	`setpoint_c` decimal(5,2),
	`rh_percent` decimal(5,2),
	`tolerance_c` decimal(4,2),
	`tolerance_rh` decimal(4,2),
	`low_c` decimal(5,2),
	`high_c` decimal(5,2),
	`hours_low` decimal(6,2),
	`hours_high` decimal(6,2),
	`light_source` enum('daylight','uv_cabinet'),
	`rpm` int,
	`minutes` decimal(6,2),
	`radius_cm` decimal(5,2),
	`notes` text,
	`active` boolean NOT NULL DEFAULT true,
	`created_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `storage_conditions_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
ALTER TABLE `audit_log` ADD CONSTRAINT `audit_log_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `users` ADD CONSTRAINT `users_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `batches` ADD CONSTRAINT `batches_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `batches` ADD CONSTRAINT `batches_variant_id_variants_id_fk` FOREIGN KEY (`variant_id`) REFERENCES `variants`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `batches` ADD CONSTRAINT `batches_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `formula_lines` ADD CONSTRAINT `formula_lines_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `formula_lines` ADD CONSTRAINT `formula_lines_variant_id_variants_id_fk` FOREIGN KEY (`variant_id`) REFERENCES `variants`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `formula_lines` ADD CONSTRAINT `formula_lines_ingredient_id_ingredients_id_fk` FOREIGN KEY (`ingredient_id`) REFERENCES `ingredients`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `ingredients` ADD CONSTRAINT `ingredients_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `products` ADD CONSTRAINT `products_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `products` ADD CONSTRAINT `products_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `variants` ADD CONSTRAINT `variants_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `variants` ADD CONSTRAINT `variants_product_id_products_id_fk` FOREIGN KEY (`product_id`) REFERENCES `products`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `variants` ADD CONSTRAINT `variants_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `chamber_logs` ADD CONSTRAINT `chamber_logs_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `chamber_logs` ADD CONSTRAINT `chamber_logs_condition_id_storage_conditions_id_fk` FOREIGN KEY (`condition_id`) REFERENCES `storage_conditions`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `chamber_logs` ADD CONSTRAINT `chamber_logs_uploaded_by_users_id_fk` FOREIGN KEY (`uploaded_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `chamber_readings` ADD CONSTRAINT `chamber_readings_log_id_chamber_logs_id_fk` FOREIGN KEY (`log_id`) REFERENCES `chamber_logs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `storage_conditions` ADD CONSTRAINT `storage_conditions_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `storage_conditions` ADD CONSTRAINT `storage_conditions_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `audit_lab_at_idx` ON `audit_log` (`lab_id`,`at`);--> statement-breakpoint
CREATE INDEX `audit_entity_idx` ON `audit_log` (`lab_id`,`entity`,`entity_id`);--> statement-breakpoint
CREATE INDEX `users_lab_idx` ON `users` (`lab_id`);--> statement-breakpoint
CREATE INDEX `batches_variant_idx` ON `batches` (`variant_id`);--> statement-breakpoint
CREATE INDEX `formula_lines_variant_idx` ON `formula_lines` (`variant_id`,`position`);--> statement-breakpoint
CREATE INDEX `variants_lab_idx` ON `variants` (`lab_id`);--> statement-breakpoint
CREATE INDEX `chamber_logs_condition_idx` ON `chamber_logs` (`lab_id`,`condition_id`);--> statement-breakpoint
CREATE INDEX `chamber_readings_log_at_idx` ON `chamber_readings` (`log_id`,`at`);--> statement-breakpoint
CREATE INDEX `conditions_lab_idx` ON `storage_conditions` (`lab_id`);