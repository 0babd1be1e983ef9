CREATE TABLE `password_guards` (
	`key_hash` char(64) NOT NULL,
	`failures` int NOT NULL DEFAULT 0,
	`locked_until` datetime(3),
	`updated_at` datetime(3) NOT NULL,
	CONSTRAINT `password_guards_key_hash` PRIMARY KEY(`key_hash`)
);
--> statement-breakpoint
ALTER TABLE `users` DROP COLUMN `failed_sign_ins`;--> statement-breakpoint
ALTER TABLE `users` DROP COLUMN `locked_until`;