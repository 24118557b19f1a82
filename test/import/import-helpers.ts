/** Shared set-up of the import tests: a temporary database with one workspace, and CSV building. */
import { eq } from "drizzle-orm";
import type { Database } from "../../src/db/client.ts";
import {
  experiments,
  imports,
  metrics,
  realizedMeasurements,
  results,
  workspaces,
} from "../../src/db/schema.ts";
import { type ImportReport, type ImportRequest, importFile } from "../../src/import/import-file.ts";
import { createTestDb } from "../helpers/db.ts";

export type Cells = Record<string, string | number>;

/** A CSV file from rows of cells; the header is the union of their columns in first-seen order. */
export function toCsv(rows: readonly Cells[]): string {
  const columns: string[] = [];
  for (const row of rows)
    for (const column of Object.keys(row)) if (!columns.includes(column)) columns.push(column);
  const quote = (value: string) => (/[",\n]/.test(value) ? `"${value.replaceAll('"', '""')}"` : value);
  const lines = [columns.join(",")];
  for (const row of rows) lines.push(columns.map((column) => quote(String(row[column] ?? ""))).join(","));
  return `${lines.join("\n")}\n`;
}

export async function createImportTestDb() {
  const handle = await createTestDb();
  const [workspace] = await handle.db.insert(workspaces).values({ name: "northwind-trial" }).returning();
  if (!workspace) throw new Error("workspace not created");
  const run = (content: string, options: Partial<ImportRequest> = {}): Promise<ImportReport> =>
    importFile(handle.db, {
      workspaceId: workspace.id,
      tokenId: null,
      kind: "results",
      fileName: "history.csv",
      content,
      ...options,
    });
  return { ...handle, workspace, run, snapshot: () => snapshot(handle.db) };
}

/** Everything an import can write, for comparing before and after. */
export async function snapshot(db: Database) {
  return {
    metrics: await db.select().from(metrics),
    experiments: await db.select().from(experiments),
    results: await db.select().from(results),
    realized: await db.select().from(realizedMeasurements),
  };
}

export async function resultOf(db: Database, experimentKey: string, metricKey: string) {
  const all = await db
    .select({ result: results, metricKey: metrics.key })
    .from(results)
    .innerJoin(experiments, eq(results.experimentId, experiments.id))
    .innerJoin(metrics, eq(results.metricId, metrics.id))
    .where(eq(experiments.key, experimentKey));
  const match = all.find((entry) => entry.metricKey === metricKey);
  if (!match) throw new Error(`no result for ${experimentKey} x ${metricKey}`);
  return match.result;
}

export async function importLog(db: Database) {
  return db.select().from(imports);
}

/** A valid counts row of a binary metric; override cells per test. */
export function countsRow(overrides: Cells = {}): Cells {
  return {
    experiment: "exp-1",
    name: "Shorter sign-up form",
    team: "Growth",
    metric: "signup_rate",
    metric_kind: "binary",
    direction: "increase",
    started_on: "2024-01-08",
    ended_on: "2024-01-22",
    decision: "shipped",
    control_n: 1000,
    treatment_n: 1000,
    control_conversions: 100,
    treatment_conversions: 120,
    ...overrides,
  };
}
