-- Custom SQL migration file, put your code below! --
-- Bump data_versions.version of the workspace on every write to its history (see schema.ts, dataVersions).
-- The EXISTS guard skips the bump while a workspace itself is being deleted (its rows cascade).
INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT `id`, 0 FROM `workspaces`;
--> statement-breakpoint
CREATE TRIGGER `metrics_data_version_insert` AFTER INSERT ON `metrics` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT NEW.`workspace_id`, 1 WHERE EXISTS (SELECT 1 FROM `workspaces` WHERE `id` = NEW.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `metrics_data_version_update` AFTER UPDATE ON `metrics` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT NEW.`workspace_id`, 1 WHERE EXISTS (SELECT 1 FROM `workspaces` WHERE `id` = NEW.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `metrics_data_version_delete` AFTER DELETE ON `metrics` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT OLD.`workspace_id`, 1 WHERE EXISTS (SELECT 1 FROM `workspaces` WHERE `id` = OLD.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `experiments_data_version_insert` AFTER INSERT ON `experiments` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT NEW.`workspace_id`, 1 WHERE EXISTS (SELECT 1 FROM `workspaces` WHERE `id` = NEW.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `experiments_data_version_update` AFTER UPDATE ON `experiments` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT NEW.`workspace_id`, 1 WHERE EXISTS (SELECT 1 FROM `workspaces` WHERE `id` = NEW.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `experiments_data_version_delete` AFTER DELETE ON `experiments` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT OLD.`workspace_id`, 1 WHERE EXISTS (SELECT 1 FROM `workspaces` WHERE `id` = OLD.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `results_data_version_insert` AFTER INSERT ON `results` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT e.`workspace_id`, 1 FROM `experiments` e WHERE e.`id` = NEW.`experiment_id` AND EXISTS (SELECT 1 FROM `workspaces` w WHERE w.`id` = e.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `results_data_version_update` AFTER UPDATE ON `results` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT e.`workspace_id`, 1 FROM `experiments` e WHERE e.`id` = NEW.`experiment_id` AND EXISTS (SELECT 1 FROM `workspaces` w WHERE w.`id` = e.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `results_data_version_delete` AFTER DELETE ON `results` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT e.`workspace_id`, 1 FROM `experiments` e WHERE e.`id` = OLD.`experiment_id` AND EXISTS (SELECT 1 FROM `workspaces` w WHERE w.`id` = e.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `realized_measurements_data_version_insert` AFTER INSERT ON `realized_measurements` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT e.`workspace_id`, 1 FROM `experiments` e WHERE e.`id` = NEW.`experiment_id` AND EXISTS (SELECT 1 FROM `workspaces` w WHERE w.`id` = e.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `realized_measurements_data_version_update` AFTER UPDATE ON `realized_measurements` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT e.`workspace_id`, 1 FROM `experiments` e WHERE e.`id` = NEW.`experiment_id` AND EXISTS (SELECT 1 FROM `workspaces` w WHERE w.`id` = e.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
--> statement-breakpoint
CREATE TRIGGER `realized_measurements_data_version_delete` AFTER DELETE ON `realized_measurements` BEGIN INSERT INTO `data_versions` (`workspace_id`, `version`) SELECT e.`workspace_id`, 1 FROM `experiments` e WHERE e.`id` = OLD.`experiment_id` AND EXISTS (SELECT 1 FROM `workspaces` w WHERE w.`id` = e.`workspace_id`) ON CONFLICT(`workspace_id`) DO UPDATE SET `version` = `version` + 1; END;
