CREATE TABLE `lab_attribute_sets` (
	`lab_id` bigint unsigned NOT NULL,
	`product_type` enum('oil_in_water','water_in_oil','anhydrous_balm','anhydrous_scrub','gel','oil','surfactant_wash','other') NOT NULL,
	`attribute_ids` json NOT NULL,
	`updated_by` bigint unsigned,
	`updated_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `lab_attribute_sets_lab_id_product_type_pk` PRIMARY KEY(`lab_id`,`product_type`)
);
--> statement-breakpoint
CREATE TABLE `study_templates` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`name` varchar(120) NOT NULL,
	`description` text,
	`plan` json NOT NULL,
	`source_study_id` bigint unsigned,
	`created_by` bigint unsigned,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `study_templates_id` PRIMARY KEY(`id`),
	CONSTRAINT `study_templates_lab_name_uq` UNIQUE(`lab_id`,`name`)
);
--> statement-breakpoint
ALTER TABLE `batches` ADD `material_lots` json;--> statement-breakpoint
ALTER TABLE `lab_attribute_sets` ADD CONSTRAINT `lab_attribute_sets_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `lab_attribute_sets` ADD CONSTRAINT `lab_attribute_sets_updated_by_users_id_fk` FOREIGN KEY (`updated_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_templates` ADD CONSTRAINT `study_templates_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_templates` ADD CONSTRAINT `study_templates_source_study_id_studies_id_fk` FOREIGN KEY (`source_study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_templates` ADD CONSTRAINT `study_templates_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;