/**
 * Reads a plan file for the stateless forecast (`plumbline forecast --plan FILE.csv`): one row per
 * planned test, with `name` and either `se` (the SE of the relative lift), or `n_per_arm` and
 * `baseline` (a baseline rate), or `n_per_arm`, `mean` and `sd`; `team` is optional. SEs follow
 * statistics.md section 7. Every problem is reported with its row (header = row 1) and column;
 * with any problem no test is returned.
 */
import type { ImportRowError } from "../import/import-report.ts";
import { readTable } from "../import/read-table.ts";
import { RowReader } from "../import/row-reader.ts";
import { StatsInputError } from "../stats/errors.ts";
import { plannedStandardError } from "../stats/forecast-standard-error.ts";

export const planColumns = ["name", "team", "se", "n_per_arm", "baseline", "mean", "sd"] as const;

export interface PlanTest {
  readonly name: string;
  readonly team: string;
  readonly standardError: number;
}

export type PlanResult =
  | { readonly ok: true; readonly tests: readonly PlanTest[] }
  | { readonly ok: false; readonly errors: readonly ImportRowError[] };

export function readPlanFile(content: string): PlanResult {
  const read = readTable(content, "csv");
  if (!read.ok) return read;
  const { columns, rows } = read.table;
  const errors: ImportRowError[] = [];
  const known = new Set<string>(planColumns);
  for (const column of columns)
    if (!known.has(column))
      errors.push({
        row: 1,
        column,
        message: `unknown column "${column}"; the columns are ${planColumns.join(", ")}`,
      });
  if (!columns.includes("name"))
    errors.push({ row: 1, column: "name", message: 'the required column "name" is missing' });
  if (!columns.includes("se") && !columns.includes("n_per_arm"))
    errors.push({
      row: 1,
      column: null,
      message: "give a column se, or n_per_arm with baseline (or mean and sd)",
    });
  if (errors.length > 0) return { ok: false, errors };
  if (rows.length === 0)
    return { ok: false, errors: [{ row: 0, column: null, message: "the plan has no rows" }] };
  const tests: PlanTest[] = [];
  const seen = new Map<string, number>();
  for (const tableRow of rows) {
    const reader = new RowReader(tableRow, errors);
    const name = reader.text("name");
    if (name === undefined) reader.fail("name", "is required");
    else if (seen.has(name))
      reader.fail("name", `the name "${name}" is already used on row ${seen.get(name)}`);
    else seen.set(name, tableRow.row);
    const se = reader.decimal("se")?.value;
    const n = reader.has("n_per_arm") ? reader.count("n_per_arm") : undefined;
    const baseline = reader.decimal("baseline")?.value;
    const mean = reader.decimal("mean")?.value;
    const sd = reader.decimal("sd")?.value;
    if (reader.errorCount > 0 || name === undefined) continue;
    try {
      const standardError = plannedStandardError({
        standardError: se ?? null,
        nPerArm: n ?? null,
        baselineRate: baseline ?? null,
        baselineMean: mean ?? null,
        baselineSd: sd ?? null,
      }).standardError;
      tests.push({ name, team: reader.text("team") ?? "(no team)", standardError });
    } catch (error) {
      if (!(error instanceof StatsInputError)) throw error;
      reader.fail(columnOfParameter(error.parameter), planMessage(error));
    }
  }
  if (errors.length > 0) return { ok: false, errors };
  return { ok: true, tests };
}

const columnByParameter: Record<string, string> = {
  standardError: "se",
  nPerArm: "n_per_arm",
  baselineRate: "baseline",
  baselineMean: "mean",
  baselineSd: "sd",
  "baselineMean and baselineSd": "sd",
};

function columnOfParameter(parameter: string): string {
  return columnByParameter[parameter] ?? "se";
}

function planMessage(error: StatsInputError): string {
  if (error.parameter === "standardError" && error.message.endsWith("none"))
    return "no SE can be worked out: give se, or n_per_arm with baseline (or mean and sd)";
  if (error.parameter === "nPerArm" && error.message.endsWith("neither"))
    return "n_per_arm is required with a baseline";
  return error.message
    .replace(/^standardError/, "se")
    .replace(/^nPerArm/, "n_per_arm")
    .replace(/^baselineRate/, "baseline")
    .replace(/^baselineMean and baselineSd/, "mean and sd")
    .replace(/^baselineMean/, "mean")
    .replace(/^baselineSd/, "sd");
}
