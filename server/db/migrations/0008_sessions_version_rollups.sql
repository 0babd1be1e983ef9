CREATE TABLE `chamber_rollups` (
	`log_id` bigint unsigned NOT NULL,
	`hour_start` datetime(3) NOT NULL,
	`lab_id` bigint unsigned NOT NULL,
	`n` int NOT NULL,
	`seq_first` int NOT NULL,
	`seq_last` int NOT NULL,
	`first_at` datetime(3) NOT NULL,
	`last_at` datetime(3) NOT NULL,
	`max_gap_ms` int NOT NULL,
	`t_sum` double NOT NULL,
	`t_min` double NOT NULL,
	`t_max` double NOT NULL,
	`arrhenius_sum` double NOT NULL,
	`t_out` int NOT NULL,
	`rh_n` int NOT NULL,
	`rh_sum` double NOT NULL,
	`rh_min` double,
	`rh_max` double,
	`rh_out` int NOT NULL,
	CONSTRAINT `chamber_rollups_log_id_hour_start_pk` PRIMARY KEY(`log_id`,`hour_start`)
);
--> statement-breakpoint
ALTER TABLE `sessions` ADD `user_id` bigint unsigned;--> statement-breakpoint
ALTER TABLE `sessions` ADD `user_version` int unsigned;--> statement-breakpoint
ALTER TABLE `users` ADD `version` int unsigned DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE `chamber_rollups` ADD CONSTRAINT `chamber_rollups_log_id_chamber_logs_id_fk` FOREIGN KEY (`log_id`) REFERENCES `chamber_logs`(`id`) ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX `sessions_user_idx` ON `sessions` (`user_id`);--> statement-breakpoint
UPDATE `sessions` s JOIN `users` u ON u.id = JSON_VALUE(s.data, '$.passport.user') SET s.user_id = u.id, s.user_version = u.version;
