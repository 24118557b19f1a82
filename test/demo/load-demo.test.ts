import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { and, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { resolveToken } from "../../src/api/tokens.ts";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createDb, type DatabaseHandle } from "../../src/db/client.ts";
import { experiments, metrics, realizedMeasurements, results, workspaces } from "../../src/db/schema.ts";
import { type LoadedDemo, loadDemoWorkspace } from "../../src/demo/load-demo.ts";

// A temporary file database with the migrations applied, like test/helpers/db.ts, but with its
// URL known so that the CLI test can open the same database through PLUMBLINE_DATABASE_URL.
const folder = mkdtempSync(join(tmpdir(), "plumbline-demo-test-"));
const databaseUrl = `file:${join(folder, "demo.db")}`;
let handle: DatabaseHandle;
let loaded: LoadedDemo;

beforeAll(async () => {
  handle = await createDb(databaseUrl);
  loaded = await loadDemoWorkspace(handle.db);
}, 120_000);

afterAll(() => {
  handle.close();
  rmSync(folder, { recursive: true, force: true });
});

async function storedResults(workspaceId: number) {
  return handle.db
    .select({
      key: experiments.key,
      metric: metrics.key,
      lift: results.lift,
      liftSe: results.liftSe,
      srmFlagged: results.srmFlagged,
      isPrimary: results.isPrimary,
      inputForm: results.inputForm,
      decision: experiments.decision,
      isAa: experiments.isAa,
      stoppedEarly: experiments.stoppedEarly,
    })
    .from(results)
    .innerJoin(experiments, eq(results.experimentId, experiments.id))
    .innerJoin(metrics, eq(results.metricId, metrics.id))
    .where(eq(experiments.workspaceId, workspaceId));
}

describe("loadDemoWorkspace", () => {
  it("imports the whole demo with zero errors", () => {
    const truth = loaded.demo.truth;
    expect(loaded.history.errors).toEqual([]);
    expect(loaded.realized.errors).toEqual([]);
    expect(loaded.history.outcome).toBe("applied");
    expect(loaded.realized.outcome).toBe("applied");
    expect(loaded.history.created).toBe(truth.experiments.length);
    expect(loaded.realized.created).toBe(truth.counts.holdouts);
    expect(loaded.workspace.name).toBe("demo");
    expect(loaded.created).toBe(true);
  });

  it("stores what the truth says each row derives to: lift, SE, flags and decisions", async () => {
    const stored = await storedResults(loaded.workspace.id);
    const byRow = new Map(stored.map((row) => [`${row.key}/${row.metric}`, row]));
    expect(stored.length).toBe(loaded.demo.truth.experiments.length);
    for (const expected of loaded.demo.truth.experiments) {
      const row = byRow.get(`${expected.key}/${expected.metric}`);
      const context = `${expected.key} ${expected.metric} (${expected.inputForm})`;
      expect(row, context).toBeDefined();
      // Two independent readings of the same text (the generator's and the importer's).
      expect(Math.abs(row!.lift - expected.observedLift), `${context} lift`).toBeLessThan(1e-9);
      expect(Math.abs(row!.liftSe / expected.observedSe - 1), `${context} se`).toBeLessThan(1e-9);
      expect(row!.inputForm, context).toBe(expected.inputForm);
      expect(row!.srmFlagged, context).toBe(expected.srmFlagged);
      expect(row!.isPrimary, context).toBe(expected.isPrimary);
      expect(row!.decision, context).toBe(expected.decision);
      expect(row!.isAa, context).toBe(expected.isAa);
      expect(row!.stoppedEarly, context).toBe(expected.stoppedEarly);
    }
  });

  it("stores the holdouts as realized measurements", async () => {
    const stored = await handle.db
      .select({
        key: experiments.key,
        estimate: realizedMeasurements.estimate,
        se: realizedMeasurements.standardError,
      })
      .from(realizedMeasurements)
      .innerJoin(experiments, eq(realizedMeasurements.experimentId, experiments.id))
      .where(eq(experiments.workspaceId, loaded.workspace.id));
    const byKey = new Map(stored.map((row) => [row.key, row]));
    for (const expected of loaded.demo.truth.experiments.filter((row) => row.holdout)) {
      const row = byKey.get(expected.key)!;
      expect(row.estimate).toBeCloseTo(expected.holdout!.realizedLift, 12);
      expect(row.se).toBeCloseTo(expected.holdout!.realizedSe, 12);
    }
    expect(stored.length).toBe(loaded.demo.truth.counts.holdouts);
  });

  it("returns a fresh read token for the workspace", async () => {
    const resolved = await resolveToken(handle.db, loaded.token);
    expect(resolved?.role).toBe("read");
    expect(resolved?.workspaceId).toBe(loaded.workspace.id);
    expect(loaded.readToken).toBe(loaded.token);
    expect((await resolveToken(handle.db, loaded.adminToken!))?.role).toBe("admin");
  });

  it("refreshes reproducibly: a second load replaces the data, same rows, nothing left over", async () => {
    const before = await storedResults(loaded.workspace.id);
    const again = await loadDemoWorkspace(handle.db);
    expect(again.created).toBe(false);
    expect(again.workspace.id).toBe(loaded.workspace.id);
    expect(again.history.errors).toEqual([]);
    expect(again.adminToken).toBeUndefined();
    const after = await storedResults(loaded.workspace.id);
    const sortKey = (row: { key: string; metric: string }) => `${row.key}/${row.metric}`;
    const sorted = (rows: typeof before) => [...rows].sort((a, b) => sortKey(a).localeCompare(sortKey(b)));
    expect(sorted(after)).toEqual(sorted(before));
    const experimentCount = await handle.db
      .select({ id: experiments.id })
      .from(experiments)
      .where(eq(experiments.workspaceId, loaded.workspace.id));
    expect(experimentCount.length).toBe(600);
    expect(await resolveToken(handle.db, again.token)).toBeDefined();
  });

  it("leaves other workspaces alone", async () => {
    const other = await loadDemoWorkspace(handle.db, {
      workspaceName: "demo-small",
      seed: 3,
      experiments: 50,
    });
    expect(other.history.errors).toEqual([]);
    const [demoRow] = await handle.db
      .select()
      .from(workspaces)
      .where(and(eq(workspaces.name, "demo")));
    expect((await storedResults(demoRow!.id)).length).toBe(loaded.demo.truth.experiments.length);
  });
});

describe("plumbline demo", () => {
  it("prints one JSON document with the workspace, the counts and a read token", async () => {
    const previous = process.env["PLUMBLINE_DATABASE_URL"];
    const io = memoryIo();
    try {
      // The CLI opens its own connection to the same file database.
      process.env["PLUMBLINE_DATABASE_URL"] = databaseUrl;
      const code = await main(["demo", "--seed", "7", "--json"], io);
      expect(io.stderr).toEqual([]);
      expect(code).toBe(0);
      expect(io.stdout.length).toBe(1);
      const document = JSON.parse(io.stdout[0]!) as {
        workspace: { name: string };
        seed: number;
        token: string;
        counts: { experiments: number };
        imports: { history: { created: number } };
      };
      expect(document.workspace.name).toBe("demo");
      expect(document.seed).toBe(7);
      expect(document.counts.experiments).toBe(600);
      expect(document.imports.history.created).toBeGreaterThan(600);
      expect((await resolveToken(handle.db, document.token))?.role).toBe("read");
    } finally {
      if (previous === undefined) delete process.env["PLUMBLINE_DATABASE_URL"];
      else process.env["PLUMBLINE_DATABASE_URL"] = previous;
    }
  }, 120_000);

  it("refuses an unknown flag and a bad seed with exit code 2", async () => {
    const io = memoryIo();
    expect(await main(["demo", "--bogus"], io)).toBe(2);
    expect(await main(["demo", "--seed", "1.5"], io)).toBe(2);
    expect(io.stderr.join("\n")).toContain("--seed must be a whole number");
  });
});
