/**
 * Validates a results file (the canonical layout of layouts.ts) and turns it into what will be
 * stored: metrics, experiments and one result per experiment x metric, each with its lift and SE
 * (sign-flipped for decrease metrics), absolute difference and sample ratio mismatch test.
 * Nothing is written here; every error of the file is collected.
 */
import { sampleRatioMismatch, sampleRatioMismatchThreshold } from "../stats/sample-ratio-mismatch.ts";
import type { ImportNote, ImportRowError } from "./import-report.ts";
import {
  decisions,
  defaultPlannedSplit,
  experimentLevelColumns,
  metricDirections,
  metricKinds,
  resultsColumns,
  resultsOptionalColumns,
} from "./layouts.ts";
import type { Table } from "./read-table.ts";
import { estimateRow, formatNumber, type InputForm } from "./row-estimate.ts";
import { RowReader } from "./row-reader.ts";

export type MetricKind = (typeof metricKinds)[number];
export type MetricDirection = (typeof metricDirections)[number];
export type Decision = (typeof decisions)[number];

export interface StoredMetric {
  readonly key: string;
  readonly kind: MetricKind;
  readonly direction: MetricDirection;
}

/** Experiment fields named by the file; a field absent from the header stays undefined (kept as stored). */
export interface ExperimentFields {
  name?: string;
  team?: string | null;
  hypothesis?: string | null;
  startedOn?: string | null;
  endedOn?: string | null;
  decision?: Decision;
  decidedOn?: string | null;
  isAa?: boolean;
  stoppedEarly?: boolean;
  plannedAlpha?: number | null;
  plannedPower?: number | null;
  plannedMde?: number | null;
  plannedSplit?: number[] | null;
  plannedSampleSize?: number | null;
}

export interface PlannedExperiment {
  readonly key: string;
  readonly fields: ExperimentFields;
}

export interface PlannedMetric {
  readonly key: string;
  readonly kind: MetricKind;
  readonly direction: MetricDirection;
  /** Given by metric_name / metric_family; undefined keeps the stored value (or the key for a new metric). */
  readonly name: string | undefined;
  readonly family: string | undefined;
}

export interface PlannedResult {
  readonly row: number;
  readonly experimentKey: string;
  readonly metricKey: string;
  readonly isPrimary: boolean;
  readonly input: Record<string, string>;
  readonly inputForm: InputForm;
  readonly controlN: number | null;
  readonly treatmentN: number | null;
  readonly lift: number;
  readonly liftSe: number;
  readonly absoluteDifference: number | null;
  readonly srmPValue: number | null;
  readonly srmFlagged: boolean;
  readonly notes: string | null;
}

export interface ResultsPlan {
  readonly experiments: readonly PlannedExperiment[];
  readonly metrics: readonly PlannedMetric[];
  readonly results: readonly PlannedResult[];
  readonly errors: readonly ImportRowError[];
  readonly notes: readonly ImportNote[];
}

const knownColumns = new Set<string>([...resultsColumns, ...resultsOptionalColumns]);

/** Where each experiment-level column goes, and how its cell is read. */
const experimentFieldReaders: Record<
  (typeof experimentLevelColumns)[number],
  { field: keyof ExperimentFields; read: (reader: RowReader, column: string) => unknown }
> = {
  name: { field: "name", read: (reader, column) => reader.text(column) },
  team: { field: "team", read: (reader, column) => reader.text(column) },
  hypothesis: { field: "hypothesis", read: (reader, column) => reader.text(column) },
  started_on: { field: "startedOn", read: (reader, column) => reader.date(column) },
  ended_on: { field: "endedOn", read: (reader, column) => reader.date(column) },
  decision: { field: "decision", read: (reader, column) => reader.choice(column, decisions) },
  decided_on: { field: "decidedOn", read: (reader, column) => reader.date(column) },
  is_aa: { field: "isAa", read: (reader, column) => reader.boolean(column) },
  stopped_early: { field: "stoppedEarly", read: (reader, column) => reader.boolean(column) },
  planned_alpha: { field: "plannedAlpha", read: (reader, column) => openUnit(reader, column) },
  planned_power: { field: "plannedPower", read: (reader, column) => openUnit(reader, column) },
  planned_mde: { field: "plannedMde", read: (reader, column) => positive(reader, column) },
  planned_split: { field: "plannedSplit", read: (reader, column) => reader.split(column) },
  planned_sample_size: { field: "plannedSampleSize", read: (reader, column) => reader.count(column) },
};

/** Defaults of fields a file names in its header but leaves empty on every row of an experiment. */
const emptyFieldValues: Partial<Record<keyof ExperimentFields, unknown>> = {
  decision: "pending",
  isAa: false,
  stoppedEarly: false,
};

export function planResults(table: Table, storedMetrics: ReadonlyMap<string, StoredMetric>): ResultsPlan {
  const errors: ImportRowError[] = [];
  const notes: ImportNote[] = [];
  for (const column of table.columns) {
    if (!knownColumns.has(column)) {
      errors.push({
        row: table.format === "csv" ? 1 : 0,
        column,
        message: `unknown column "${column}"; the layout's columns are ${[...resultsColumns, ...resultsOptionalColumns].join(", ")}`,
      });
    }
  }
  for (const required of ["experiment", "metric"]) {
    if (!table.columns.includes(required)) {
      errors.push({
        row: table.format === "csv" ? 1 : 0,
        column: required,
        message: "this required column is missing",
      });
    }
  }
  if (errors.length > 0) return { experiments: [], metrics: [], results: [], errors, notes };

  const readers = table.rows.map((row) => new RowReader(row, errors));
  const experimentRows = new Map<string, RowReader[]>();
  const metricRows = new Map<string, RowReader[]>();
  for (const reader of readers) {
    const experimentKey = reader.text("experiment");
    const metricKey = reader.text("metric");
    if (experimentKey === undefined) reader.fail("experiment", "is empty: every row names its experiment");
    if (metricKey === undefined) reader.fail("metric", "is empty: every row names its metric");
    if (experimentKey !== undefined) pushTo(experimentRows, experimentKey, reader);
    if (metricKey !== undefined) pushTo(metricRows, metricKey, reader);
    validateCells(reader);
  }

  const metrics = new Map<string, PlannedMetric>();
  for (const [key, rows] of metricRows) {
    const metric = planMetric(key, rows, storedMetrics.get(key), notes);
    if (metric) metrics.set(key, metric);
  }

  const experiments: PlannedExperiment[] = [];
  const results: PlannedResult[] = [];
  for (const [key, rows] of experimentRows) {
    const fields = agreeExperimentFields(rows, table.columns);
    if (fields.startedOn && fields.endedOn && fields.endedOn < fields.startedOn) {
      const row = rows.find((reader) => reader.has("ended_on")) ?? rows[0];
      row?.fail(
        "ended_on",
        `${fields.endedOn} is before started_on ${fields.startedOn}: check both dates (one may be mistyped, or the two swapped)`,
      );
    }
    experiments.push({ key, fields });
    // Duplicates are reported first, so that a repeated row is not also blamed as a second primary.
    const seenMetrics = new Map<string, number>();
    const distinctRows: RowReader[] = [];
    for (const reader of rows) {
      const metricKey = reader.text("metric");
      if (metricKey === undefined) continue;
      const earlier = seenMetrics.get(metricKey);
      if (earlier !== undefined) {
        reader.fail(
          "metric",
          `experiment "${key}" and metric "${metricKey}" appear twice, on rows ${earlier} and ${reader.row}: give one row per experiment x metric (delete one, or correct its experiment or metric)`,
        );
        continue;
      }
      seenMetrics.set(metricKey, reader.row);
      distinctRows.push(reader);
    }
    const primaryRow = choosePrimary(key, distinctRows);
    for (const reader of distinctRows) {
      const metricKey = reader.text("metric") as string;
      const metric = metrics.get(metricKey);
      const result = planResult(
        reader,
        key,
        metricKey,
        metric,
        reader === primaryRow,
        fields.plannedSplit,
        notes,
      );
      if (result) results.push(result);
    }
  }
  errors.sort((first, second) => first.row - second.row);
  return { experiments, metrics: [...metrics.values()], results, errors, notes };
}

function pushTo<Value>(map: Map<string, Value[]>, key: string, value: Value): void {
  const list = map.get(key);
  if (list) list.push(value);
  else map.set(key, [value]);
}

/** Reads every row-level cell once so that each malformed cell reports, whatever else the row has. */
function validateCells(reader: RowReader): void {
  for (const column of ["control_n", "treatment_n"]) {
    const n = reader.count(column);
    if (n !== undefined && n < 2) reader.fail(column, `must be at least 2 units per arm; got ${n}`);
  }
  reader.count("control_conversions");
  reader.count("treatment_conversions");
  for (const column of ["control_mean", "treatment_mean", "lift", "lift_ci_low", "lift_ci_high"])
    reader.decimal(column);
  for (const column of ["control_sd", "treatment_sd"]) {
    const sd = reader.decimal(column);
    if (sd !== undefined && sd.value < 0)
      reader.fail(column, `must not be negative; got ${reader.text(column)}`);
  }
  reader.decimal("lift_se");
  reader.decimal("p_value");
  reader.decimal("ci_level");
  reader.boolean("primary");
  reader.choice("metric_kind", metricKinds);
  reader.choice("direction", metricDirections);
  for (const column of experimentLevelColumns) experimentFieldReaders[column].read(reader, column);
}

function openUnit(reader: RowReader, column: string): number | undefined {
  const value = reader.decimal(column)?.value;
  if (value === undefined) return undefined;
  if (!(value > 0 && value < 1)) {
    reader.fail(column, `must be strictly between 0 and 1 (e.g. 0.05 or 5%); got ${reader.text(column)}`);
    return undefined;
  }
  return value;
}

function positive(reader: RowReader, column: string): number | undefined {
  const value = reader.decimal(column)?.value;
  if (value === undefined) return undefined;
  if (!(value > 0)) {
    reader.fail(column, `must be above 0 (a relative lift, e.g. 0.02 or 2%); got ${reader.text(column)}`);
    return undefined;
  }
  return value;
}

function planMetric(
  key: string,
  rows: readonly RowReader[],
  stored: StoredMetric | undefined,
  notes: ImportNote[],
): PlannedMetric | undefined {
  const kind = agreeAcross(
    rows,
    "metric_kind",
    (reader) => reader.choice("metric_kind", metricKinds),
    `metric "${key}"`,
  );
  const direction = agreeAcross(
    rows,
    "direction",
    (reader) => reader.choice("direction", metricDirections),
    `metric "${key}"`,
  );
  const name = agreeAcross(rows, "metric_name", (reader) => reader.text("metric_name"), `metric "${key}"`);
  const family = agreeAcross(
    rows,
    "metric_family",
    (reader) => reader.text("metric_family"),
    `metric "${key}"`,
  );
  const first = rows[0];
  if (!first) return undefined;
  if (stored) {
    for (const [column, given, kept] of [
      ["metric_kind", kind?.value, stored.kind],
      ["direction", direction?.value, stored.direction],
    ] as const) {
      if (given !== undefined && given !== kept) {
        const row = column === "metric_kind" ? kind?.reader : direction?.reader;
        row?.fail(
          column,
          `metric "${key}" is stored as ${kept}; an import cannot change it to ${given} (its stored results would change meaning). Use a new metric key`,
        );
      }
    }
    return { key, kind: stored.kind, direction: stored.direction, name: name?.value, family: family?.value };
  }
  let resolvedKind = kind?.value;
  if (resolvedKind === undefined) {
    const counted = rows.some(
      (reader) => reader.has("control_conversions") || reader.has("treatment_conversions"),
    );
    const averaged = rows.some((reader) => reader.has("control_mean") || reader.has("treatment_mean"));
    if (counted !== averaged) {
      resolvedKind = counted ? "binary" : "continuous";
      notes.push({
        row: first.row,
        column: "metric_kind",
        message: `not given for the new metric "${key}": read as ${resolvedKind} from its ${counted ? "conversion counts" : "means"}`,
      });
    } else {
      first.fail("metric_kind", `is required for the new metric "${key}": binary or continuous`);
      return undefined;
    }
  }
  let resolvedDirection = direction?.value;
  if (resolvedDirection === undefined) {
    resolvedDirection = "increase";
    notes.push({
      row: first.row,
      column: "direction",
      message: `not given for the new metric "${key}": read as increase (higher is better); write decrease for metrics such as latency or churn`,
    });
  }
  return { key, kind: resolvedKind, direction: resolvedDirection, name: name?.value, family: family?.value };
}

/**
 * The one value a column takes on the rows given (empty cells do not count); a different value on
 * a later row is an error naming both rows.
 */
function agreeAcross<Value>(
  rows: readonly RowReader[],
  column: string,
  read: (reader: RowReader) => Value | undefined,
  owner: string,
): { value: Value; reader: RowReader } | undefined {
  let agreed: { value: Value; reader: RowReader } | undefined;
  for (const reader of rows) {
    const value = read(reader);
    if (value === undefined) continue;
    if (!agreed) {
      agreed = { value, reader };
      continue;
    }
    if (JSON.stringify(value) !== JSON.stringify(agreed.value)) {
      reader.fail(
        column,
        `"${reader.text(column)}" disagrees with row ${agreed.reader.row} ("${agreed.reader.text(column)}"): ${column} describes the ${owner.split(" ")[0]} and must be the same on every row of ${owner}`,
      );
    }
  }
  return agreed;
}

function agreeExperimentFields(rows: readonly RowReader[], columns: readonly string[]): ExperimentFields {
  const fields: Record<string, unknown> = {};
  const key = rows[0]?.text("experiment") ?? "";
  for (const column of experimentLevelColumns) {
    if (!columns.includes(column)) continue;
    const { field, read } = experimentFieldReaders[column];
    const agreed = agreeAcross(rows, column, (reader) => read(reader, column), `experiment "${key}"`);
    fields[field] =
      agreed !== undefined ? agreed.value : field in emptyFieldValues ? emptyFieldValues[field] : null;
  }
  if (fields["name"] === null) fields["name"] = key;
  return fields as ExperimentFields;
}

/**
 * Exactly one primary result per experiment: the row marked primary; when none is marked and the
 * experiment has one metric, that metric.
 */
function choosePrimary(key: string, rows: readonly RowReader[]): RowReader | undefined {
  const marked = rows.filter((reader) => reader.boolean("primary") === true);
  if (marked.length === 1) return marked[0];
  if (marked.length > 1) {
    const [first, ...rest] = marked;
    for (const reader of rest) {
      reader.fail(
        "primary",
        `experiment "${key}" already has its primary metric on row ${first?.row}: mark exactly one row primary`,
      );
    }
    return first;
  }
  if (rows.length === 1) return rows[0];
  rows[0]?.fail(
    "primary",
    `experiment "${key}" has ${rows.length} metric rows (rows ${rows.map((reader) => reader.row).join(", ")}) and none is marked primary: mark exactly one`,
  );
  return undefined;
}

function planResult(
  reader: RowReader,
  experimentKey: string,
  metricKey: string,
  metric: PlannedMetric | undefined,
  isPrimary: boolean,
  plannedSplit: number[] | null | undefined,
  notes: ImportNote[],
): PlannedResult | undefined {
  const estimate = estimateRow(reader, metric?.kind);
  if (!estimate || !metric) return undefined;
  const controlN = reader.valid("control_n") ? (reader.count("control_n") ?? null) : null;
  const treatmentN = reader.valid("treatment_n") ? (reader.count("treatment_n") ?? null) : null;
  let srmPValue: number | null = null;
  let srmFlagged = false;
  if (controlN !== null && treatmentN !== null) {
    const shares = plannedSplit ?? defaultPlannedSplit;
    srmPValue = sampleRatioMismatch([controlN, treatmentN], shares).pValue;
    srmFlagged = srmPValue < sampleRatioMismatchThreshold;
    if (srmFlagged) {
      notes.push({
        row: reader.row,
        column: "treatment_n",
        message: `sample ratio mismatch: control_n ${controlN} and treatment_n ${treatmentN} are unlikely under the planned split ${shares.map((share) => formatNumber(share)).join("/")} (chi-square p = ${srmPValue.toPrecision(3)} < ${sampleRatioMismatchThreshold}); the result is stored and flagged`,
      });
    }
  }
  const rowNotes = estimate.notes.map((note) => ({ row: reader.row, ...note }));
  notes.push(...rowNotes);
  // Decrease metrics are flipped so that a positive lift is always good (statistics.md section 0).
  const sign = metric.direction === "decrease" ? -1 : 1;
  return {
    row: reader.row,
    experimentKey,
    metricKey,
    isPrimary,
    input: reader.input,
    inputForm: estimate.form,
    controlN,
    treatmentN,
    lift: sign * estimate.lift + 0,
    liftSe: estimate.liftSe,
    absoluteDifference: estimate.absoluteDifference,
    srmPValue,
    srmFlagged,
    notes: rowNotes.length > 0 ? rowNotes.map((note) => `${note.column}: ${note.message}`).join("\n") : null,
  };
}
