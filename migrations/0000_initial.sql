CREATE TABLE `api_tokens` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`workspace_id` integer NOT NULL,
	`label` text,
	`token_hash` text NOT NULL,
	`prefix` text NOT NULL,
	`role` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`last_used_at` text,
	`revoked_at` text,
	FOREIGN KEY (`workspace_id`) REFERENCES `workspaces`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `api_tokens_token_hash_unique` ON `api_tokens` (`token_hash`);--> statement-breakpoint
CREATE INDEX `api_tokens_workspace` ON `api_tokens` (`workspace_id`);--> statement-breakpoint
CREATE TABLE `computation_cache` (
	`cache_key` text PRIMARY KEY NOT NULL,
	`workspace_id` integer NOT NULL,
	`kind` text NOT NULL,
	`value` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`workspace_id`) REFERENCES `workspaces`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE TABLE `experiments` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`workspace_id` integer NOT NULL,
	`key` text NOT NULL,
	`name` text NOT NULL,
	`team` text,
	`hypothesis` text,
	`started_on` text,
	`ended_on` text,
	`planned_split` text,
	`planned_alpha` real,
	`planned_power` real,
	`planned_mde` real,
	`planned_sample_size` integer,
	`stopped_early` integer DEFAULT false NOT NULL,
	`is_aa` integer DEFAULT false NOT NULL,
	`decision` text DEFAULT 'pending' NOT NULL,
	`decided_on` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`updated_at` text,
	FOREIGN KEY (`workspace_id`) REFERENCES `workspaces`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `experiments_workspace_key` ON `experiments` (`workspace_id`,`key`);--> statement-breakpoint
CREATE INDEX `experiments_workspace_team` ON `experiments` (`workspace_id`,`team`);--> statement-breakpoint
CREATE TABLE `imports` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`workspace_id` integer NOT NULL,
	`token_id` integer,
	`kind` text NOT NULL,
	`file_name` text,
	`content_hash` text NOT NULL,
	`dry_run` integer DEFAULT false NOT NULL,
	`row_count` integer NOT NULL,
	`created` integer DEFAULT 0 NOT NULL,
	`updated` integer DEFAULT 0 NOT NULL,
	`unchanged` integer DEFAULT 0 NOT NULL,
	`outcome` text NOT NULL,
	`errors` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`workspace_id`) REFERENCES `workspaces`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`token_id`) REFERENCES `api_tokens`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE INDEX `imports_workspace` ON `imports` (`workspace_id`);--> statement-breakpoint
CREATE TABLE `metrics` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`workspace_id` integer NOT NULL,
	`key` text NOT NULL,
	`name` text NOT NULL,
	`kind` text NOT NULL,
	`direction` text NOT NULL,
	`family` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`workspace_id`) REFERENCES `workspaces`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `metrics_workspace_key` ON `metrics` (`workspace_id`,`key`);--> statement-breakpoint
CREATE TABLE `planned_tests` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`workspace_id` integer NOT NULL,
	`key` text NOT NULL,
	`name` text NOT NULL,
	`team` text,
	`metric_id` integer NOT NULL,
	`planned_start` text,
	`daily_traffic` real,
	`n_per_arm` integer,
	`run_days` real,
	`arms` integer DEFAULT 2 NOT NULL,
	`prior_override` text,
	`status` text DEFAULT 'planned' NOT NULL,
	`experiment_id` integer,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`updated_at` text,
	FOREIGN KEY (`workspace_id`) REFERENCES `workspaces`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`metric_id`) REFERENCES `metrics`(`id`) ON UPDATE no action ON DELETE restrict,
	FOREIGN KEY (`experiment_id`) REFERENCES `experiments`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE UNIQUE INDEX `planned_tests_workspace_key` ON `planned_tests` (`workspace_id`,`key`);--> statement-breakpoint
CREATE TABLE `realized_measurements` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`experiment_id` integer NOT NULL,
	`metric_id` integer NOT NULL,
	`estimate` real NOT NULL,
	`standard_error` real NOT NULL,
	`method` text NOT NULL,
	`measured_on` text,
	`input` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`updated_at` text,
	FOREIGN KEY (`experiment_id`) REFERENCES `experiments`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`metric_id`) REFERENCES `metrics`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `realized_experiment_metric_method` ON `realized_measurements` (`experiment_id`,`metric_id`,`method`);--> statement-breakpoint
CREATE TABLE `results` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`experiment_id` integer NOT NULL,
	`metric_id` integer NOT NULL,
	`is_primary` integer DEFAULT false NOT NULL,
	`input` text NOT NULL,
	`input_form` text NOT NULL,
	`control_n` integer,
	`treatment_n` integer,
	`lift` real NOT NULL,
	`lift_se` real NOT NULL,
	`absolute_difference` real,
	`srm_p_value` real,
	`srm_flagged` integer DEFAULT false NOT NULL,
	`notes` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`updated_at` text,
	FOREIGN KEY (`experiment_id`) REFERENCES `experiments`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`metric_id`) REFERENCES `metrics`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `results_experiment_metric` ON `results` (`experiment_id`,`metric_id`);--> statement-breakpoint
CREATE INDEX `results_metric` ON `results` (`metric_id`);--> statement-breakpoint
CREATE TABLE `reviews` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`workspace_id` integer NOT NULL,
	`label` text NOT NULL,
	`settings` text NOT NULL,
	`data_fingerprint` text NOT NULL,
	`result` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`workspace_id`) REFERENCES `workspaces`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `reviews_workspace_label` ON `reviews` (`workspace_id`,`label`);--> statement-breakpoint
CREATE TABLE `workspaces` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`name` text NOT NULL,
	`description` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL
);
--> statement-breakpoint
CREATE UNIQUE INDEX `workspaces_name_unique` ON `workspaces` (`name`);