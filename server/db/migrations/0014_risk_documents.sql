CREATE TABLE `product_documents` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`variant_id` bigint unsigned,
	`study_id` bigint unsigned,
	`kind` enum('challenge_test','safety_assessment','packaging_compatibility','supplier_certificate') NOT NULL,
	`title` varchar(160) NOT NULL,
	`document_date` date NOT NULL,
	`author` varchar(120) NOT NULL,
	`summary` text NOT NULL,
	`organisms` json,
	`criteria` enum('A','B','not_met'),
	`stored_name` varchar(80) NOT NULL,
	`mime` varchar(40) NOT NULL,
	`bytes` int NOT NULL,
	`sha256` char(64) NOT NULL,
	`original_name` varchar(200) NOT NULL,
	`uploaded_by` bigint unsigned NOT NULL,
	`uploaded_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `product_documents_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `risk_assessments` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`variant_id` bigint unsigned NOT NULL,
	`entered` json NOT NULL,
	`factors` json NOT NULL,
	`low_risk` boolean NOT NULL,
	`outcome_text` text NOT NULL,
	`suggested_pao_months` int,
	`decided_pao_months` int,
	`updated_by` bigint unsigned NOT NULL,
	`updated_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `risk_assessments_id` PRIMARY KEY(`id`),
	CONSTRAINT `risk_assessments_variant_uq` UNIQUE(`variant_id`)
);
--> statement-breakpoint
ALTER TABLE `product_documents` ADD CONSTRAINT `product_documents_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `product_documents` ADD CONSTRAINT `product_documents_variant_id_variants_id_fk` FOREIGN KEY (`variant_id`) REFERENCES `variants`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `product_documents` ADD CONSTRAINT `product_documents_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `product_documents` ADD CONSTRAINT `product_documents_uploaded_by_users_id_fk` FOREIGN KEY (`uploaded_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `risk_assessments` ADD CONSTRAINT `risk_assessments_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `risk_assessments` ADD CONSTRAINT `risk_assessments_variant_id_variants_id_fk` FOREIGN KEY (`variant_id`) REFERENCES `variants`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `risk_assessments` ADD CONSTRAINT `risk_assessments_updated_by_users_id_fk` FOREIGN KEY (`updated_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `product_documents_variant_idx` ON `product_documents` (`lab_id`,`variant_id`);--> statement-breakpoint
CREATE INDEX `product_documents_study_idx` ON `product_documents` (`lab_id`,`study_id`);--> statement-breakpoint
CREATE INDEX `risk_assessments_lab_idx` ON `risk_assessments` (`lab_id`);