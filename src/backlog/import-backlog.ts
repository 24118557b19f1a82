/**
 * Imports a backlog file (CSV or JSON, layout of templates/backlog-template.csv) into a
 * workspace's planned tests. Same rules as the history import (src/import/import-file.ts): the
 * file is validated whole, every error is reported at once with its row (header = row 1) and
 * column, and the writes run in one transaction, so one bad row writes nothing. Rows are matched
 * to stored planned tests by key: new keys are created, changed rows update, identical rows are
 * unchanged. Every import is logged in the imports log (kind "backlog").
 */
import { createHash } from "node:crypto";
import { and, eq, inArray } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments, imports, metrics } from "../db/schema.ts";
import type { ImportRowError } from "../import/import-report.ts";
import { inferFormat, readTable, type TableRow } from "../import/read-table.ts";
import { RowReader } from "../import/row-reader.ts";
import {
  checkPlannedTest,
  type PlannedTestField,
  type PlannedTestFields,
  type PriorOverride,
  plannedTestStatuses,
} from "./planned-test-fields.ts";
import { savePlannedTest } from "./planned-tests.ts";

export const backlogColumns = [
  "key",
  "name",
  "team",
  "metric",
  "planned_start",
  "daily_traffic",
  "n_per_arm",
  "run_days",
  "arms",
  "baseline_rate",
  "baseline_mean",
  "baseline_sd",
  "standard_error",
  "prior_win_rate",
  "prior_loss_rate",
  "prior_effect_scale",
  "prior_shape",
  "status",
  "experiment",
] as const;

const requiredColumns = ["key", "name", "metric"] as const;

/** The column of the file that carries each field (for row-and-column errors). */
export const columnOfField: Record<PlannedTestField, string> = {
  key: "key",
  name: "name",
  team: "team",
  metric: "metric",
  plannedStart: "planned_start",
  dailyTraffic: "daily_traffic",
  nPerArm: "n_per_arm",
  runDays: "run_days",
  arms: "arms",
  baselineRate: "baseline_rate",
  baselineMean: "baseline_mean",
  baselineSd: "baseline_sd",
  standardError: "standard_error",
  priorOverride: "prior_win_rate",
  status: "status",
  experiment: "experiment",
};

export const backlogImportLimits = { maxBytes: 5 * 1024 * 1024, maxRows: 5_000 } as const;

export interface BacklogImportRequest {
  readonly workspaceId: number;
  readonly tokenId: number | null;
  readonly fileName: string | null;
  readonly content: string;
  readonly format?: "csv" | "json";
  readonly dryRun?: boolean;
}

export interface BacklogImportReport {
  readonly importId: number;
  readonly outcome: "applied" | "rejected" | "dry_run";
  readonly rows: number;
  readonly created: number;
  readonly updated: number;
  readonly unchanged: number;
  /** Every problem found; when not empty, nothing was written. */
  readonly errors: readonly ImportRowError[];
}

interface Counts {
  created: number;
  updated: number;
  unchanged: number;
}

export async function importBacklog(
  db: Database,
  request: BacklogImportRequest,
): Promise<BacklogImportReport> {
  const contentHash = createHash("sha256").update(request.content, "utf8").digest("hex");
  const dryRun = request.dryRun === true;
  const log = async (
    outcome: BacklogImportReport["outcome"],
    rows: number,
    counts: Counts,
    errors: readonly ImportRowError[],
    executor: Pick<Database, "insert"> = db,
  ): Promise<number> => {
    const [entry] = await executor
      .insert(imports)
      .values({
        workspaceId: request.workspaceId,
        tokenId: request.tokenId,
        kind: "backlog",
        fileName: request.fileName,
        contentHash,
        dryRun,
        rowCount: rows,
        ...counts,
        outcome,
        errors: [...errors],
      })
      .returning({ id: imports.id });
    if (!entry) throw new Error("the imports log did not return the new entry's id");
    return entry.id;
  };
  const none: Counts = { created: 0, updated: 0, unchanged: 0 };
  const reject = async (rows: number, errors: readonly ImportRowError[]): Promise<BacklogImportReport> => ({
    importId: await log("rejected", rows, none, errors),
    outcome: "rejected",
    rows,
    ...none,
    errors,
  });

  if (Buffer.byteLength(request.content, "utf8") > backlogImportLimits.maxBytes) {
    return reject(0, [
      {
        row: 0,
        column: null,
        message: `the file is larger than ${backlogImportLimits.maxBytes} bytes: split it`,
      },
    ]);
  }
  const read = readTable(request.content, request.format ?? inferFormat(request.fileName, request.content));
  if (!read.ok) return reject(0, read.errors);
  const table = read.table;
  const headerErrors = checkBacklogHeader(table.columns);
  if (headerErrors.length > 0) return reject(table.rows.length, headerErrors);
  if (table.rows.length === 0)
    return reject(0, [{ row: 0, column: null, message: "the file has a header but no data rows" }]);
  if (table.rows.length > backlogImportLimits.maxRows) {
    return reject(table.rows.length, [
      {
        row: 0,
        column: null,
        message: `the file has ${table.rows.length} rows; the limit is ${backlogImportLimits.maxRows}`,
      },
    ]);
  }

  const errors: ImportRowError[] = [];
  const planned: { row: number; fields: PlannedTestFields }[] = [];
  const firstRowOfKey = new Map<string, number>();
  for (const tableRow of table.rows) {
    const fields = readBacklogRow(tableRow, errors);
    if (!fields) continue;
    const earlier = firstRowOfKey.get(fields.key);
    if (earlier !== undefined) {
      errors.push({
        row: tableRow.row,
        column: "key",
        message: `the key "${fields.key}" is already used on row ${earlier}`,
      });
      continue;
    }
    firstRowOfKey.set(fields.key, tableRow.row);
    planned.push({ row: tableRow.row, fields });
  }
  await checkKeysExist(db, request.workspaceId, planned, errors);
  if (errors.length > 0) return reject(table.rows.length, sortErrors(errors));

  const now = new Date().toISOString();
  const store = async (executor: Database): Promise<Counts> => {
    const counts: Counts = { created: 0, updated: 0, unchanged: 0 };
    for (const { fields } of planned) {
      const { outcome } = await savePlannedTest(executor, request.workspaceId, fields, {
        mode: "upsert",
        now,
      });
      counts[outcome] += 1;
    }
    return counts;
  };
  if (dryRun) {
    // A dry run counts what would change by writing inside a transaction that is rolled back.
    let counts: Counts = none;
    await db
      .transaction(async (transaction) => {
        counts = await store(transaction as unknown as Database);
        throw new DryRunRollback();
      })
      .catch((error: unknown) => {
        if (!(error instanceof DryRunRollback)) throw error;
      });
    const importId = await log("dry_run", table.rows.length, counts, []);
    return { importId, outcome: "dry_run", rows: table.rows.length, ...counts, errors: [] };
  }
  return db.transaction(async (transaction) => {
    const counts = await store(transaction as unknown as Database);
    const importId = await log("applied", table.rows.length, counts, [], transaction);
    return { importId, outcome: "applied" as const, rows: table.rows.length, ...counts, errors: [] };
  });
}

class DryRunRollback extends Error {}

/** Unknown and missing columns, reported on the header row. */
export function checkBacklogHeader(columns: readonly string[]): ImportRowError[] {
  const errors: ImportRowError[] = [];
  const known = new Set<string>(backlogColumns);
  for (const column of columns)
    if (!known.has(column))
      errors.push({
        row: 1,
        column,
        message: `unknown column "${column}"; the columns are ${backlogColumns.join(", ")}`,
      });
  for (const column of requiredColumns)
    if (!columns.includes(column))
      errors.push({ row: 1, column, message: `the required column "${column}" is missing` });
  return errors;
}

/** Reads one row into planned-test fields, recording each problem with its row and column. */
export function readBacklogRow(tableRow: TableRow, errors: ImportRowError[]): PlannedTestFields | undefined {
  const reader = new RowReader(tableRow, errors);
  const required = (column: string): string => {
    const value = reader.text(column);
    if (value === undefined) reader.fail(column, "is required");
    return value ?? "";
  };
  const positive = (column: string): number | null => {
    const value = reader.decimal(column)?.value;
    if (value === undefined) return null;
    if (!(value > 0)) {
      reader.fail(column, `must be a positive number; got ${reader.text(column)}`);
      return null;
    }
    return value;
  };
  const key = required("key");
  const name = required("name");
  const metric = required("metric");
  const plannedStart = reader.date("planned_start") ?? null;
  const dailyTraffic = positive("daily_traffic");
  const nPerArm = reader.has("n_per_arm") ? (reader.count("n_per_arm") ?? null) : null;
  if (nPerArm === 0) reader.fail("n_per_arm", "must be at least 1");
  const runDays = positive("run_days");
  const arms = reader.has("arms") ? reader.count("arms") : 2;
  if (arms !== undefined && arms < 2)
    reader.fail("arms", `must be at least 2 (control included); got ${arms}`);
  const baselineRate = reader.decimal("baseline_rate")?.value ?? null;
  const baselineMean = reader.decimal("baseline_mean")?.value ?? null;
  const baselineSd = positive("baseline_sd");
  const standardError = positive("standard_error");
  const status = reader.has("status") ? reader.choice("status", plannedTestStatuses) : "planned";
  const experiment = reader.text("experiment") ?? null;
  const priorOverride = readPriorOverride(reader);
  if (reader.errorCount > 0 || arms === undefined || status === undefined || priorOverride === undefined)
    return undefined;
  const fields: PlannedTestFields = {
    key,
    name,
    team: reader.text("team") ?? null,
    metric,
    plannedStart,
    dailyTraffic,
    nPerArm: nPerArm === 0 ? null : nPerArm,
    runDays,
    arms,
    baselineRate,
    baselineMean,
    baselineSd,
    standardError,
    priorOverride,
    status,
    experiment,
  };
  for (const problem of checkPlannedTest(fields))
    reader.fail(columnOfProblem(problem.field, problem.message), problem.message);
  return reader.errorCount > 0 ? undefined : fields;
}

/** null when no prior column is given; undefined after recording an error. */
function readPriorOverride(reader: RowReader): PriorOverride | null | undefined {
  const priorColumns = ["prior_win_rate", "prior_loss_rate", "prior_effect_scale", "prior_shape"];
  if (!priorColumns.some((column) => reader.has(column))) return null;
  const before = reader.errorCount;
  const winRate = reader.decimal("prior_win_rate")?.value;
  const lossRate = reader.decimal("prior_loss_rate")?.value;
  const effectScale = reader.decimal("prior_effect_scale")?.value;
  const shape = reader.has("prior_shape")
    ? reader.choice("prior_shape", ["normal", "fat"] as const)
    : undefined;
  if (!reader.has("prior_win_rate"))
    reader.fail("prior_win_rate", "is required when a team prior is given (with prior_effect_scale)");
  if (!reader.has("prior_effect_scale"))
    reader.fail("prior_effect_scale", "is required when a team prior is given (with prior_win_rate)");
  if (reader.errorCount > before || winRate === undefined || effectScale === undefined) return undefined;
  return {
    winRate,
    ...(lossRate === undefined ? {} : { lossRate }),
    effectScale,
    ...(shape === undefined ? {} : { shape }),
  };
}

function columnOfProblem(field: PlannedTestField, message: string): string {
  if (field !== "priorOverride") return columnOfField[field];
  if (message.startsWith("lossRate")) return "prior_loss_rate";
  if (message.startsWith("effectScale")) return "prior_effect_scale";
  return "prior_win_rate";
}

/** Metric and experiment keys must exist in the workspace (one query each for the whole file). */
async function checkKeysExist(
  db: Database,
  workspaceId: number,
  planned: readonly { row: number; fields: PlannedTestFields }[],
  errors: ImportRowError[],
): Promise<void> {
  const metricKeys = [...new Set(planned.map(({ fields }) => fields.metric))];
  const experimentKeys = [
    ...new Set(planned.flatMap(({ fields }) => (fields.experiment === null ? [] : [fields.experiment]))),
  ];
  const knownMetrics = new Set(
    metricKeys.length === 0
      ? []
      : (
          await db
            .select({ key: metrics.key })
            .from(metrics)
            .where(and(eq(metrics.workspaceId, workspaceId), inArray(metrics.key, metricKeys)))
        ).map((row) => row.key),
  );
  const knownExperiments = new Set(
    experimentKeys.length === 0
      ? []
      : (
          await db
            .select({ key: experiments.key })
            .from(experiments)
            .where(and(eq(experiments.workspaceId, workspaceId), inArray(experiments.key, experimentKeys)))
        ).map((row) => row.key),
  );
  for (const { row, fields } of planned) {
    if (!knownMetrics.has(fields.metric))
      errors.push({
        row,
        column: "metric",
        message: `no metric "${fields.metric}" in this workspace (metrics come from the history import)`,
      });
    if (fields.experiment !== null && !knownExperiments.has(fields.experiment))
      errors.push({
        row,
        column: "experiment",
        message: `no experiment "${fields.experiment}" in this workspace`,
      });
  }
}

function sortErrors(errors: ImportRowError[]): ImportRowError[] {
  return [...errors].sort((a, b) => a.row - b.row);
}
