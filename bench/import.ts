/**
 * Import speed: a generated history of 20,000 rows (10,000 experiments x 2 metrics, one counts
 * result and one lift + lift_se result each) imported into a fresh temporary file database, then
 * imported again unchanged, then again with every row edited (20,000 updates).
 * Baseline, run in this process on the same file: reading and validating it without a database
 * (readTable + planResults), the floor any import pays. Ratios are import time / baseline time.
 */
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { createDb } from "../src/db/client.ts";
import { workspaces } from "../src/db/schema.ts";
import { importFile } from "../src/import/import-file.ts";
import { readTable } from "../src/import/read-table.ts";
import { planResults } from "../src/import/results-plan.ts";

const header =
  "experiment,name,team,metric,metric_kind,direction,started_on,ended_on,decision,is_aa,stopped_early," +
  "control_n,treatment_n,control_conversions,treatment_conversions,lift,lift_se,primary";

/** `rows` rows of an invented history; `edit` shifts every estimate so that each row is updated. */
export function generatedHistory(rows: number, edit = 0): string {
  const lines = [header];
  for (let index = 0; index < rows / 2; index += 1) {
    const day = String(1 + (index % 28)).padStart(2, "0");
    const month = String(1 + (index % 12)).padStart(2, "0");
    const experiment = `exp-${index},Idea ${index},Team ${index % 4}`;
    const dates = `2023-${month}-${day},2024-${month}-${day},${index % 3 === 0 ? "shipped" : "not_shipped"},no,no`;
    lines.push(
      `${experiment},conversion,binary,increase,${dates},${10_000 + (index % 50)},${10_000 + (index % 61)},${1_000 + (index % 37)},${1_010 + (index % 41) + edit},,,yes`,
    );
    lines.push(
      `${experiment},revenue_per_user,continuous,increase,${dates},,,,,${((index % 20) + edit) / 1000},0.01,no`,
    );
  }
  return `${lines.join("\n")}\n`;
}

async function seconds<Value>(
  work: () => Promise<Value> | Value,
): Promise<{ seconds: number; value: Value }> {
  const started = performance.now();
  const value = await work();
  return { seconds: (performance.now() - started) / 1000, value };
}

export async function runImportBench(rows = 20_000): Promise<object> {
  const content = generatedHistory(rows);
  const edited = generatedHistory(rows, 1);
  const folder = mkdtempSync(join(tmpdir(), "plumbline-bench-import-"));
  const handle = await createDb(`file:${join(folder, "bench.db")}`);
  try {
    const [workspace] = await handle.db.insert(workspaces).values({ name: "bench" }).returning();
    if (!workspace) throw new Error("workspace not created");
    const run = (file: string) =>
      importFile(handle.db, {
        workspaceId: workspace.id,
        tokenId: null,
        kind: "results",
        fileName: "history.csv",
        content: file,
      });
    // Warm up module loading and JIT on a small file in another workspace.
    const [warm] = await handle.db.insert(workspaces).values({ name: "bench-warm-up" }).returning();
    if (warm) {
      await importFile(handle.db, {
        workspaceId: warm.id,
        tokenId: null,
        kind: "results",
        fileName: "warm.csv",
        content: generatedHistory(200),
      });
    }
    const baseline = await seconds(() => {
      const read = readTable(content, "csv");
      if (!read.ok) throw new Error("the generated file did not read");
      return planResults(read.table, new Map()).results.length;
    });
    const first = await seconds(() => run(content));
    const again = await seconds(() => run(content));
    const edit = await seconds(() => run(edited));
    for (const [label, report, expected] of [
      ["first", first.value, [rows, 0, 0]],
      ["again", again.value, [0, 0, rows]],
      ["edit", edit.value, [0, rows, 0]],
    ] as const) {
      const counts = [report.created, report.updated, report.unchanged];
      if (report.outcome !== "applied" || counts.join() !== expected.join())
        throw new Error(
          `${label} import gave ${report.outcome} ${counts.join("/")}, expected ${expected.join("/")}`,
        );
    }
    const round = (value: number) => Number(value.toFixed(3));
    return {
      rows,
      baseline: "readTable + planResults of the same file in this process, no database",
      baselineSeconds: round(baseline.seconds),
      firstImportSeconds: round(first.seconds),
      unchangedReimportSeconds: round(again.seconds),
      editedReimportSeconds: round(edit.seconds),
      firstImportRatio: round(first.seconds / baseline.seconds),
      unchangedReimportRatio: round(again.seconds / baseline.seconds),
      editedReimportRatio: round(edit.seconds / baseline.seconds),
      rowsPerSecondFirstImport: Math.round(rows / first.seconds),
    };
  } finally {
    handle.close();
    rmSync(folder, { recursive: true, force: true });
  }
}
