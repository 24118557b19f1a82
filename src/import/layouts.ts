/**
 * The two canonical import layouts. Column names are matched without case; an unknown column is
 * an error (a typo such as "lift_sd" must not be silently ignored). The templates in
 * templates/history-template.csv and templates/realized-template.csv follow these lists.
 */

/** The canonical results layout, in template order: one row per experiment x metric. */
export const resultsColumns = [
  "experiment",
  "name",
  "team",
  "metric",
  "metric_kind",
  "direction",
  "started_on",
  "ended_on",
  "decision",
  "is_aa",
  "stopped_early",
  "planned_alpha",
  "planned_power",
  "planned_mde",
  "control_n",
  "treatment_n",
  "control_conversions",
  "treatment_conversions",
  "control_mean",
  "control_sd",
  "treatment_mean",
  "treatment_sd",
  "lift",
  "lift_se",
  "lift_ci_low",
  "lift_ci_high",
  "ci_level",
  "p_value",
  "primary",
] as const;

/** Optional columns of the results layout, accepted but not in the template. */
export const resultsOptionalColumns = [
  "hypothesis",
  "decided_on",
  "planned_split",
  "planned_sample_size",
  "metric_name",
  "metric_family",
] as const;

/** Columns that describe the experiment: repeated on each of its metric rows, they must agree. */
export const experimentLevelColumns = [
  "name",
  "team",
  "hypothesis",
  "started_on",
  "ended_on",
  "decision",
  "decided_on",
  "is_aa",
  "stopped_early",
  "planned_alpha",
  "planned_power",
  "planned_mde",
  "planned_split",
  "planned_sample_size",
] as const;

/** Columns that describe the metric: wherever the metric appears in a file, they must agree. */
export const metricLevelColumns = ["metric_kind", "direction", "metric_name", "metric_family"] as const;

/** The realized-measurements layout: one row per experiment x metric x method. */
export const realizedColumns = [
  "experiment",
  "metric",
  "realized_lift",
  "realized_se",
  "method",
  "measured_on",
] as const;

export type ResultsColumn = (typeof resultsColumns)[number] | (typeof resultsOptionalColumns)[number];
export type RealizedColumn = (typeof realizedColumns)[number];

export const decisions = ["shipped", "not_shipped", "iterate", "pending"] as const;
export const metricKinds = ["binary", "continuous"] as const;
export const metricDirections = ["increase", "decrease"] as const;
export const realizedMethods = ["holdout", "retest", "post_launch"] as const;

/** The default confidence level of lift_ci_low / lift_ci_high when ci_level is not given. */
export const defaultConfidenceLevel = 0.95;

/** The split assumed for the sample ratio mismatch test when planned_split is not given. */
export const defaultPlannedSplit: readonly number[] = [0.5, 0.5];
