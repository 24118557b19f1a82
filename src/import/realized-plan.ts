/**
 * Validates a realized-measurements file (experiment, metric, realized_lift, realized_se, method,
 * measured_on): the lift measured after launch by a holdout, a re-test or a post-launch read.
 * The experiment and metric must already be stored (import the results first). Lifts are flipped
 * for decrease metrics like results. Nothing is written here.
 */
import type { ImportRowError } from "./import-report.ts";
import { realizedColumns, realizedMethods } from "./layouts.ts";
import type { Table } from "./read-table.ts";
import type { MetricDirection } from "./results-plan.ts";
import { RowReader } from "./row-reader.ts";

export type RealizedMethod = (typeof realizedMethods)[number];

export interface PlannedRealized {
  readonly row: number;
  readonly experimentKey: string;
  readonly metricKey: string;
  readonly estimate: number;
  readonly standardError: number;
  readonly method: RealizedMethod;
  readonly measuredOn: string | null;
  readonly input: Record<string, string>;
}

export interface RealizedPlan {
  readonly measurements: readonly PlannedRealized[];
  readonly errors: readonly ImportRowError[];
}

const requiredColumns = ["experiment", "metric", "realized_lift", "realized_se", "method"] as const;

export function planRealized(
  table: Table,
  storedExperimentKeys: ReadonlySet<string>,
  storedMetricDirections: ReadonlyMap<string, MetricDirection>,
): RealizedPlan {
  const errors: ImportRowError[] = [];
  const headerRow = table.format === "csv" ? 1 : 0;
  for (const column of table.columns) {
    if (!(realizedColumns as readonly string[]).includes(column)) {
      errors.push({
        row: headerRow,
        column,
        message: `unknown column "${column}"; the realized layout's columns are ${realizedColumns.join(", ")}`,
      });
    }
  }
  for (const column of requiredColumns) {
    if (!table.columns.includes(column))
      errors.push({ row: headerRow, column, message: "this required column is missing" });
  }
  if (errors.length > 0) return { measurements: [], errors };

  const measurements: PlannedRealized[] = [];
  const seen = new Map<string, number>();
  for (const tableRow of table.rows) {
    const reader = new RowReader(tableRow, errors);
    const experimentKey = reader.text("experiment");
    const metricKey = reader.text("metric");
    if (experimentKey === undefined) reader.fail("experiment", "is empty: every row names its experiment");
    else if (!storedExperimentKeys.has(experimentKey)) {
      reader.fail("experiment", `"${experimentKey}" is not in this workspace: import its results first`);
    }
    let direction: MetricDirection | undefined;
    if (metricKey === undefined) reader.fail("metric", "is empty: every row names its metric");
    else {
      direction = storedMetricDirections.get(metricKey);
      if (direction === undefined)
        reader.fail("metric", `"${metricKey}" is not in this workspace: import its results first`);
    }
    const lift = reader.decimal("realized_lift");
    if (!reader.has("realized_lift"))
      reader.fail("realized_lift", "missing estimate: give the realized lift");
    const se = reader.decimal("realized_se");
    if (!reader.has("realized_se"))
      reader.fail("realized_se", "missing: give the standard error of the realized lift");
    else if (se !== undefined && !(se.value > 0))
      reader.fail("realized_se", `must be above 0; got ${reader.text("realized_se")}`);
    const method = reader.choice("method", realizedMethods);
    if (!reader.has("method")) reader.fail("method", `missing: one of ${realizedMethods.join(", ")}`);
    const measuredOn = reader.date("measured_on");
    if (experimentKey === undefined || metricKey === undefined || method === undefined) continue;
    const identity = JSON.stringify([experimentKey, metricKey, method]);
    const earlier = seen.get(identity);
    if (earlier !== undefined) {
      reader.fail(
        "method",
        `experiment "${experimentKey}", metric "${metricKey}" and method ${method} appear twice, on rows ${earlier} and ${reader.row}`,
      );
      continue;
    }
    seen.set(identity, reader.row);
    if (reader.errorCount > 0 || lift === undefined || se === undefined || direction === undefined) continue;
    measurements.push({
      row: reader.row,
      experimentKey,
      metricKey,
      // Flipped like results so that realized and claimed lifts compare directly.
      estimate: (direction === "decrease" ? -lift.value : lift.value) + 0,
      standardError: se.value,
      method,
      measuredOn: measuredOn ?? null,
      input: reader.input,
    });
  }
  errors.sort((first, second) => first.row - second.row);
  return { measurements, errors };
}
