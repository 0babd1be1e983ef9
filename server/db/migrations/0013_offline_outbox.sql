ALTER TABLE `observations` ADD `client_id` varchar(36);--> statement-breakpoint
ALTER TABLE `observations` ADD `client_hash` varchar(64);--> statement-breakpoint
ALTER TABLE `observations` ADD `device_recorded_at` datetime(3);--> statement-breakpoint
ALTER TABLE `observations` ADD `device_clock_offset_s` int;--> statement-breakpoint
ALTER TABLE `photos` ADD `client_id` varchar(36);--> statement-breakpoint
ALTER TABLE `observations` ADD CONSTRAINT `observations_client_uq` UNIQUE(`lab_id`,`client_id`,`study_attribute_id`);--> statement-breakpoint
ALTER TABLE `photos` ADD CONSTRAINT `photos_client_uq` UNIQUE(`lab_id`,`client_id`);