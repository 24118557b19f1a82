/**
 * The storage schema: the source of truth. `npm run db:generate` writes the SQL migration in
 * migrations/ from this file; migrations are committed and applied at start.
 * Dates are ISO strings (YYYY-MM-DD); instants are ISO timestamps. Lifts are fractions.
 */
import { sql } from "drizzle-orm";
import { index, integer, real, sqliteTable, text, uniqueIndex } from "drizzle-orm/sqlite-core";

const createdAt = () => text("created_at").notNull().default(sql`(strftime('%Y-%m-%dT%H:%M:%fZ', 'now'))`);

export const workspaces = sqliteTable("workspaces", {
  id: integer("id").primaryKey({ autoIncrement: true }),
  name: text("name").notNull().unique(),
  description: text("description"),
  createdAt: createdAt(),
});

export const apiTokens = sqliteTable(
  "api_tokens",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    workspaceId: integer("workspace_id")
      .notNull()
      .references(() => workspaces.id, { onDelete: "cascade" }),
    label: text("label"),
    /** SHA-256 of the token; the token itself is shown once and never stored. */
    tokenHash: text("token_hash").notNull().unique(),
    /** The first characters of the token, to tell tokens apart in listings. */
    prefix: text("prefix").notNull(),
    role: text("role", { enum: ["read", "write", "admin"] }).notNull(),
    createdAt: createdAt(),
    lastUsedAt: text("last_used_at"),
    revokedAt: text("revoked_at"),
  },
  (table) => [index("api_tokens_workspace").on(table.workspaceId)],
);

export const metrics = sqliteTable(
  "metrics",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    workspaceId: integer("workspace_id")
      .notNull()
      .references(() => workspaces.id, { onDelete: "cascade" }),
    key: text("key").notNull(),
    name: text("name").notNull(),
    kind: text("kind", { enum: ["binary", "continuous"] }).notNull(),
    direction: text("direction", { enum: ["increase", "decrease"] }).notNull(),
    /** The group whose tests are pooled when the prior is fitted; defaults to the key. */
    family: text("family").notNull(),
    createdAt: createdAt(),
  },
  (table) => [uniqueIndex("metrics_workspace_key").on(table.workspaceId, table.key)],
);

export const experiments = sqliteTable(
  "experiments",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    workspaceId: integer("workspace_id")
      .notNull()
      .references(() => workspaces.id, { onDelete: "cascade" }),
    /** The team's own id, unique per workspace. */
    key: text("key").notNull(),
    name: text("name").notNull(),
    team: text("team"),
    hypothesis: text("hypothesis"),
    startedOn: text("started_on"),
    endedOn: text("ended_on"),
    /** Planned share of traffic per arm, control first, as JSON, e.g. [0.5, 0.5]. */
    plannedSplit: text("planned_split", { mode: "json" }).$type<number[]>(),
    plannedAlpha: real("planned_alpha"),
    plannedPower: real("planned_power"),
    plannedMde: real("planned_mde"),
    plannedSampleSize: integer("planned_sample_size"),
    stoppedEarly: integer("stopped_early", { mode: "boolean" }).notNull().default(false),
    isAa: integer("is_aa", { mode: "boolean" }).notNull().default(false),
    decision: text("decision", { enum: ["shipped", "not_shipped", "iterate", "pending"] })
      .notNull()
      .default("pending"),
    decidedOn: text("decided_on"),
    createdAt: createdAt(),
    updatedAt: text("updated_at"),
  },
  (table) => [
    uniqueIndex("experiments_workspace_key").on(table.workspaceId, table.key),
    index("experiments_workspace_team").on(table.workspaceId, table.team),
  ],
);

export const results = sqliteTable(
  "results",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    experimentId: integer("experiment_id")
      .notNull()
      .references(() => experiments.id, { onDelete: "cascade" }),
    metricId: integer("metric_id")
      .notNull()
      .references(() => metrics.id, { onDelete: "cascade" }),
    isPrimary: integer("is_primary", { mode: "boolean" }).notNull().default(false),
    /** The input exactly as given (column name -> raw text), as JSON. */
    input: text("input", { mode: "json" }).notNull().$type<Record<string, string>>(),
    /** Which input form the estimate came from: counts | means | interval | p_value | standard_error. */
    inputForm: text("input_form").notNull(),
    controlN: integer("control_n"),
    treatmentN: integer("treatment_n"),
    /** Relative lift, sign-flipped for decrease metrics so that positive is good. */
    lift: real("lift").notNull(),
    /** Standard error of `lift`. */
    liftSe: real("lift_se").notNull(),
    /** Treatment minus control on the metric's own scale (not sign-flipped), when known. */
    absoluteDifference: real("absolute_difference"),
    /** Chi-square goodness-of-fit p-value of the arm counts against the planned split. */
    srmPValue: real("srm_p_value"),
    srmFlagged: integer("srm_flagged", { mode: "boolean" }).notNull().default(false),
    /** Notes from conversion (e.g. an asymmetric interval read on the log scale). */
    notes: text("notes"),
    createdAt: createdAt(),
    updatedAt: text("updated_at"),
  },
  (table) => [
    uniqueIndex("results_experiment_metric").on(table.experimentId, table.metricId),
    index("results_metric").on(table.metricId),
  ],
);

export const realizedMeasurements = sqliteTable(
  "realized_measurements",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    experimentId: integer("experiment_id")
      .notNull()
      .references(() => experiments.id, { onDelete: "cascade" }),
    metricId: integer("metric_id")
      .notNull()
      .references(() => metrics.id, { onDelete: "cascade" }),
    /** Realized relative lift, sign-flipped like results.lift. */
    estimate: real("estimate").notNull(),
    standardError: real("standard_error").notNull(),
    method: text("method", { enum: ["holdout", "retest", "post_launch"] }).notNull(),
    measuredOn: text("measured_on"),
    input: text("input", { mode: "json" }).$type<Record<string, string>>(),
    createdAt: createdAt(),
    updatedAt: text("updated_at"),
  },
  (table) => [
    uniqueIndex("realized_experiment_metric_method").on(table.experimentId, table.metricId, table.method),
  ],
);

export const imports = sqliteTable(
  "imports",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    workspaceId: integer("workspace_id")
      .notNull()
      .references(() => workspaces.id, { onDelete: "cascade" }),
    /** The token that ran it; null for the CLI working directly on the database. */
    tokenId: integer("token_id").references(() => apiTokens.id, { onDelete: "set null" }),
    kind: text("kind", { enum: ["results", "realized", "backlog"] }).notNull(),
    fileName: text("file_name"),
    contentHash: text("content_hash").notNull(),
    dryRun: integer("dry_run", { mode: "boolean" }).notNull().default(false),
    rowCount: integer("row_count").notNull(),
    created: integer("created").notNull().default(0),
    updated: integer("updated").notNull().default(0),
    unchanged: integer("unchanged").notNull().default(0),
    outcome: text("outcome", { enum: ["applied", "rejected", "dry_run"] }).notNull(),
    errors: text("errors", { mode: "json" })
      .notNull()
      .$type<{ row: number; column: string | null; message: string }[]>(),
    createdAt: createdAt(),
  },
  (table) => [index("imports_workspace").on(table.workspaceId)],
);

/** Planned tests of the backlog (forecast). */
export const plannedTests = sqliteTable(
  "planned_tests",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    workspaceId: integer("workspace_id")
      .notNull()
      .references(() => workspaces.id, { onDelete: "cascade" }),
    key: text("key").notNull(),
    name: text("name").notNull(),
    team: text("team"),
    metricId: integer("metric_id")
      .notNull()
      .references(() => metrics.id, { onDelete: "restrict" }),
    plannedStart: text("planned_start"),
    dailyTraffic: real("daily_traffic"),
    nPerArm: integer("n_per_arm"),
    runDays: real("run_days"),
    arms: integer("arms").notNull().default(2),
    /** Baseline rate of a binary metric, for the planned SE sqrt(2 (1-p) / (n p)) (statistics.md sec. 7). */
    baselineRate: real("baseline_rate"),
    /** Baseline mean and per-user sd of a continuous metric, for the planned SE (sd/m) sqrt(2/n). */
    baselineMean: real("baseline_mean"),
    baselineSd: real("baseline_sd"),
    /** The planned standard error of the relative lift, when the team states it directly. */
    standardError: real("standard_error"),
    /** Optional team-specific assumed prior, as JSON {winRate, lossRate?, effectScale, shape?}. */
    priorOverride: text("prior_override", { mode: "json" }).$type<{
      winRate: number;
      lossRate?: number;
      effectScale: number;
      shape?: "normal" | "fat";
    }>(),
    status: text("status", { enum: ["planned", "running", "done"] })
      .notNull()
      .default("planned"),
    experimentId: integer("experiment_id").references(() => experiments.id, { onDelete: "set null" }),
    createdAt: createdAt(),
    updatedAt: text("updated_at"),
  },
  (table) => [uniqueIndex("planned_tests_workspace_key").on(table.workspaceId, table.key)],
);

/** Saved program reviews: immutable snapshots. */
export const reviews = sqliteTable(
  "reviews",
  {
    id: integer("id").primaryKey({ autoIncrement: true }),
    workspaceId: integer("workspace_id")
      .notNull()
      .references(() => workspaces.id, { onDelete: "cascade" }),
    label: text("label").notNull(),
    settings: text("settings", { mode: "json" }).notNull().$type<Record<string, unknown>>(),
    /** Fingerprint of the data the review read. */
    dataFingerprint: text("data_fingerprint").notNull(),
    result: text("result", { mode: "json" }).notNull().$type<Record<string, unknown>>(),
    createdAt: createdAt(),
  },
  (table) => [uniqueIndex("reviews_workspace_label").on(table.workspaceId, table.label)],
);

/** Computation cache keyed by a fingerprint of the settings and the data read. */
export const computationCache = sqliteTable("computation_cache", {
  cacheKey: text("cache_key").primaryKey(),
  workspaceId: integer("workspace_id")
    .notNull()
    .references(() => workspaces.id, { onDelete: "cascade" }),
  kind: text("kind").notNull(),
  value: text("value", { mode: "json" }).notNull().$type<unknown>(),
  createdAt: createdAt(),
});

/**
 * A counter per workspace that database triggers (migration 0003_data_version_triggers) bump on
 * every insert, update or delete of its metrics, experiments, results and realized measurements,
 * whoever writes them (API, CLI, another process). A cached computation stores the version it read,
 * so it is validated without reading the history again.
 */
export const dataVersions = sqliteTable("data_versions", {
  workspaceId: integer("workspace_id")
    .primaryKey()
    .references(() => workspaces.id, { onDelete: "cascade" }),
  version: integer("version").notNull().default(0),
});
