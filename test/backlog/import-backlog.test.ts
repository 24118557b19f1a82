/**
 * Backlog CSV import: all or nothing with row-and-column errors (rows numbered as a spreadsheet
 * shows them, header = row 1), upsert by key, and the committed template imports cleanly.
 * Planned SE conventions: statistics.md section 7 (worked by hand below).
 */
import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { eq } from "drizzle-orm";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { importBacklog } from "../../src/backlog/import-backlog.ts";
import { listPlannedTests } from "../../src/backlog/planned-tests.ts";
import { imports, plannedTests } from "../../src/db/schema.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedWorkspace, type TestDb } from "./seed.ts";

const template = readFileSync(
  fileURLToPath(new URL("../../templates/backlog-template.csv", import.meta.url)),
  "utf8",
);

describe("importBacklog", () => {
  let handle: TestDb;
  let workspaceId: number;
  beforeEach(async () => {
    handle = await createTestDb();
    workspaceId = await seedWorkspace(handle);
  });
  afterEach(() => handle.dispose());

  const run = (content: string, dryRun = false) =>
    importBacklog(handle.db, { workspaceId, tokenId: null, fileName: "backlog.csv", content, dryRun });

  it("imports the template, derives the planned SEs, and re-imports as unchanged", async () => {
    const report = await run(template);
    expect(report.errors).toEqual([]);
    expect(report).toMatchObject({ outcome: "applied", rows: 4, created: 4, updated: 0, unchanged: 0 });
    const stored = await listPlannedTests(handle.db, workspaceId);
    const byKey = new Map(stored.map((test) => [test.key, test]));
    // 12000 a day x 14 days / 2 arms = 84000 per arm; p = 0.042: sqrt(2 * 0.958 / (84000 * 0.042)).
    expect(byKey.get("checkout-express-pay")!.plannedStandardError).toBeCloseTo(
      Math.sqrt((2 * 0.958) / (84_000 * 0.042)),
      14,
    );
    // 8000 x 21 / 3 = 56000 per arm; (28.7 / 41.2) sqrt(2 / 56000).
    const bundles = byKey.get("basket-bundles")!;
    expect(bundles.plannedStandardError).toBeCloseTo((28.7 / 41.2) * Math.sqrt(2 / 56_000), 14);
    expect(bundles.priorOverride).toEqual({ winRate: 0.15, lossRate: 0.1, effectScale: 0.02, shape: "fat" });
    expect(bundles.metricFamily).toBe("revenue");
    expect(byKey.get("onboarding-tour")!.plannedStandardError).toBe(0.012);

    const again = await run(template);
    expect(again).toMatchObject({ outcome: "applied", created: 0, updated: 0, unchanged: 4 });
    const edited = await run(template.replace("Typo-tolerant search", "Typo-tolerant search v2"));
    expect(edited).toMatchObject({ created: 0, updated: 1, unchanged: 3 });
  });

  it("reports every bad row with its row and column and writes nothing", async () => {
    const content = [
      "key,name,team,metric,n_per_arm,baseline_rate,standard_error,prior_win_rate,status",
      "ok-1,Fine test,Search,order_rate,10000,5%,,,planned",
      "bad-rate,Rate above one,Search,order_rate,10000,1.5,,,",
      ",No key,Search,order_rate,,,0.01,,",
      "no-se,Nothing to size it,Search,order_rate,,,,,",
      "bad-metric,Unknown metric,Search,page_speed,,,0.01,,",
      "bad-prior,Prior without scale,Search,order_rate,,,0.01,0.2,",
      "ok-1,Duplicate key,Search,order_rate,,,0.01,,",
      "bad-status,Odd status,Search,order_rate,,,0.01,,shelved",
      "done-1,Done without experiment,Search,order_rate,,,0.01,,done",
      "bad-n,Half a user,Search,order_rate,10.5,5%,,,",
    ].join("\n");
    const report = await run(content);
    expect(report.outcome).toBe("rejected");
    const errors = report.errors.map(({ row, column }) => [row, column]);
    expect(errors).toEqual([
      [3, "baseline_rate"],
      [4, "key"],
      [5, "standard_error"],
      [6, "metric"],
      [7, "prior_effect_scale"],
      [8, "key"],
      [9, "status"],
      [10, "experiment"],
      [11, "n_per_arm"],
    ]);
    for (const error of report.errors) expect(error.message.length).toBeGreaterThan(5);
    expect(await handle.db.select().from(plannedTests)).toEqual([]);
    const [logged] = await handle.db.select().from(imports).where(eq(imports.id, report.importId));
    expect(logged).toMatchObject({ kind: "backlog", outcome: "rejected", rowCount: 10 });
  });

  it("refuses unknown and missing columns on the header row", async () => {
    const report = await run("key,title,metric\nx,Y,order_rate\n");
    expect(report.errors.map(({ row, column }) => [row, column])).toEqual([
      [1, "title"],
      [1, "name"],
    ]);
  });

  it("counts a dry run without writing", async () => {
    const report = await run(template, true);
    expect(report).toMatchObject({ outcome: "dry_run", created: 4 });
    expect(await handle.db.select().from(plannedTests)).toEqual([]);
  });
});
