CREATE TABLE `colour_cards` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`name` varchar(80) NOT NULL,
	`cie_l` double NOT NULL,
	`cie_a` double NOT NULL,
	`cie_b` double NOT NULL,
	`created_by` bigint unsigned NOT NULL,
	`created_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	CONSTRAINT `colour_cards_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
CREATE TABLE `photo_regions` (
	`id` bigint unsigned AUTO_INCREMENT NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`photo_id` bigint unsigned NOT NULL,
	`card_id` bigint unsigned NOT NULL,
	`product_box` json NOT NULL,
	`patch_box` json NOT NULL,
	`product_stats` json NOT NULL,
	`patch_stats` json NOT NULL,
	`marked_by` bigint unsigned NOT NULL,
	`marked_at` datetime(3) NOT NULL DEFAULT CURRENT_TIMESTAMP(3),
	`reason` text,
	`replaced_at` datetime(3),
	CONSTRAINT `photo_regions_id` PRIMARY KEY(`id`)
);
--> statement-breakpoint
ALTER TABLE `colour_cards` ADD CONSTRAINT `colour_cards_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `colour_cards` ADD CONSTRAINT `colour_cards_created_by_users_id_fk` FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photo_regions` ADD CONSTRAINT `photo_regions_lab_id_labs_id_fk` FOREIGN KEY (`lab_id`) REFERENCES `labs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photo_regions` ADD CONSTRAINT `photo_regions_photo_id_photos_id_fk` FOREIGN KEY (`photo_id`) REFERENCES `photos`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photo_regions` ADD CONSTRAINT `photo_regions_card_id_colour_cards_id_fk` FOREIGN KEY (`card_id`) REFERENCES `colour_cards`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `photo_regions` ADD CONSTRAINT `photo_regions_marked_by_users_id_fk` FOREIGN KEY (`marked_by`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `colour_cards_lab_idx` ON `colour_cards` (`lab_id`);--> statement-breakpoint
CREATE INDEX `photo_regions_photo_idx` ON `photo_regions` (`lab_id`,`photo_id`);