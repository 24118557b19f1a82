/**
 * The example backlog for the demo workspace (docs/examples/demo-backlog.csv) imports into the
 * demo cleanly and can be forecast with priors fitted to the demo's history: the file stays in
 * step with the demo's metric keys and experiment keys. Planned SEs by statistics.md section 7,
 * worked by hand below.
 */
import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { importBacklog } from "../../src/backlog/import-backlog.ts";
import { listPlannedTests } from "../../src/backlog/planned-tests.ts";
import { prepareWorkspaceForecast } from "../../src/backlog/workspace-forecast.ts";
import { loadDemoWorkspace } from "../../src/demo/load-demo.ts";
import { createTestDb } from "../helpers/db.ts";
import type { TestDb } from "./seed.ts";

const example = readFileSync(
  fileURLToPath(new URL("../../docs/examples/demo-backlog.csv", import.meta.url)),
  "utf8",
);

let handle: TestDb;
let workspaceId: number;

beforeAll(async () => {
  handle = await createTestDb();
  workspaceId = (await loadDemoWorkspace(handle.db)).workspace.id;
}, 60_000);
afterAll(() => handle.dispose());

describe("docs/examples/demo-backlog.csv", () => {
  it("imports into the demo workspace and forecasts its planned and running tests", async () => {
    const report = await importBacklog(handle.db, {
      workspaceId,
      tokenId: null,
      fileName: "demo-backlog.csv",
      content: example,
    });
    expect(report.errors).toEqual([]);
    // The demo loader imported the same file already: nothing changes.
    expect(report).toMatchObject({ outcome: "applied", rows: 15, created: 0, unchanged: 15 });
    const stored = new Map((await listPlannedTests(handle.db, workspaceId)).map((test) => [test.key, test]));
    // 40000 a day x 14 days / 2 arms = 280000 per arm on p = 0.035: sqrt(2 * 0.965 / (280000 * 0.035)).
    expect(stored.get("spr-saved-cards")!.plannedStandardError).toBeCloseTo(
      Math.sqrt((2 * 0.965) / (280_000 * 0.035)),
      14,
    );
    // 45000 x 28 / 2 = 630000 per arm; (26.0 / 3.30) sqrt(2 / 630000).
    expect(stored.get("chr-tool-bundle")!.plannedStandardError).toBeCloseTo(
      (26.0 / 3.3) * Math.sqrt(2 / 630_000),
      14,
    );
    expect(stored.get("spk-category-landing")).toMatchObject({ status: "done", experiment: "SPK-1196" });

    const prepared = await prepareWorkspaceForecast(handle.db, workspaceId, {
      rules: [{ kind: "current" }, { kind: "recommended" }],
      seed: 1,
      economics: { valuePerLift: 5_000_000, launchCost: 20_000 },
    });
    // The done test is left out; the running one is forecast.
    expect(prepared.input.tests).toHaveLength(14);
    expect(prepared.input.tests.map((test) => test.name)).toContain("kck-welcome-series");
    expect(prepared.priors.map((prior) => [prior.family, prior.source])).toEqual([
      ["order_conversion", "fitted"],
      ["return_rate_28d", "fitted"],
      ["revenue_per_visitor", "fitted"],
    ]);
    expect(new Set(prepared.input.tests.map((test) => test.team))).toEqual(
      new Set(["Sprocket", "Spoke", "Chainring", "Kickstand"]),
    );
  });
});
