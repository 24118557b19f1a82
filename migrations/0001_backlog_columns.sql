ALTER TABLE `planned_tests` ADD `baseline_rate` real;--> statement-breakpoint
ALTER TABLE `planned_tests` ADD `baseline_mean` real;--> statement-breakpoint
ALTER TABLE `planned_tests` ADD `baseline_sd` real;--> statement-breakpoint
ALTER TABLE `planned_tests` ADD `standard_error` real;