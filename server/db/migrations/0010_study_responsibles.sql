CREATE TABLE `study_responsibles` (
	`study_id` bigint unsigned NOT NULL,
	`user_id` bigint unsigned NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`position` int NOT NULL,
	CONSTRAINT `study_responsibles_study_id_user_id_pk` PRIMARY KEY(`study_id`,`user_id`)
);
--> statement-breakpoint
ALTER TABLE `study_responsibles` ADD CONSTRAINT `study_responsibles_study_id_studies_id_fk` FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE `study_responsibles` ADD CONSTRAINT `study_responsibles_user_id_users_id_fk` FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `study_responsibles_user_idx` ON `study_responsibles` (`lab_id`,`user_id`);--> statement-breakpoint
INSERT INTO `study_responsibles` (`study_id`, `user_id`, `lab_id`, `position`) SELECT `id`, `responsible_id`, `lab_id`, 0 FROM `studies` WHERE `responsible_id` IS NOT NULL;
