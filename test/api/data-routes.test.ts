/**
 * The data routes: experiment filters and pagination, one experiment with its results and
 * realized measurements, results and realized filters, and imports through the API (JSON and
 * text/csv bodies, 422 with the report when rejected, the import log).
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { createTestDb } from "../helpers/db.ts";
import { type SeededWorkspace, seedWorkspace } from "./seed-workspace.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let app: ReturnType<typeof createApp>;
let alpha: SeededWorkspace;
let beta: SeededWorkspace;

async function getJson<T>(path: string, token = alpha.tokens.read): Promise<{ status: number; body: T }> {
  const response = await app.request(path, { headers: { authorization: `Bearer ${token}` } });
  return { status: response.status, body: (await response.json()) as T };
}

interface Page<T> {
  items: T[];
  total: number;
  limit: number;
  offset: number;
}

beforeAll(async () => {
  handle = await createTestDb();
  app = createApp({ db: handle.db });
  alpha = await seedWorkspace(handle.db, "alpha");
  beta = await seedWorkspace(handle.db, "beta");
});

afterAll(() => handle.dispose());

describe("experiments", () => {
  const keysOf = async (query: string) =>
    (await getJson<Page<{ key: string }>>(`/api/v1/experiments${query}`)).body.items.map((item) => item.key);

  it("filters by team, decision and metric", async () => {
    expect(await keysOf("?team=checkout")).toEqual(["alpha-001", "alpha-003"]);
    expect(await keysOf("?decision=not_shipped")).toEqual(["alpha-002"]);
    expect(await keysOf("?metric=alpha-latency")).toEqual(["alpha-001", "alpha-002"]);
    expect(await keysOf("?metric=conversion&team=checkout&decision=pending")).toEqual(["alpha-003"]);
    expect(await keysOf("?metric=beta-latency")).toEqual([]);
  });

  it("filters by start date, both ends included (the same meaning as plumbline experiments list)", async () => {
    // alpha-001 started 2024-01-08, alpha-002 2024-03-04, alpha-003 2024-06-03.
    expect(await keysOf("?from=2024-01-08&to=2024-03-04")).toEqual(["alpha-001", "alpha-002"]);
    expect(await keysOf("?from=2024-01-09&to=2024-03-03")).toEqual([]);
    expect(await keysOf("?from=2024-05-01")).toEqual(["alpha-003"]);
    expect(await keysOf("?to=2024-01-08")).toEqual(["alpha-001"]);
  });

  it("lists each experiment with its metrics' derived lift, primary first", async () => {
    const page = await getJson<
      Page<{ key: string; results: { metricKey: string; isPrimary: boolean; lift: number }[] }>
    >("/api/v1/experiments?limit=1");
    expect(page.body.items[0]?.results).toEqual([
      { metricKey: "conversion", isPrimary: true, lift: 0.02, liftSe: 0.01, srmFlagged: false },
      { metricKey: "alpha-latency", isPrimary: false, lift: -0.01, liftSe: 0.005, srmFlagged: false },
    ]);
  });

  it("paginates with the total across pages", async () => {
    const first = await getJson<Page<{ key: string }>>("/api/v1/experiments?limit=2");
    expect(first.body).toMatchObject({ total: 3, limit: 2, offset: 0 });
    expect(first.body.items.map((item) => item.key)).toEqual(["alpha-001", "alpha-002"]);
    const second = await getJson<Page<{ key: string }>>("/api/v1/experiments?limit=2&offset=2");
    expect(second.body.items.map((item) => item.key)).toEqual(["alpha-003"]);
    expect(second.body.total).toBe(3);
  });

  it("gives one experiment with its results (primary first) and realized measurements", async () => {
    const { status, body } = await getJson<{
      key: string;
      decision: string;
      plannedSplit: number[] | null;
      results: { metricKey: string; isPrimary: boolean; lift: number; liftSe: number }[];
      realizedMeasurements: { metricKey: string; method: string; estimate: number }[];
    }>("/api/v1/experiments/alpha-001");
    expect(status).toBe(200);
    expect(body.decision).toBe("shipped");
    expect(body.plannedSplit).toEqual([0.5, 0.5]);
    expect(body.results.map((result) => [result.metricKey, result.isPrimary])).toEqual([
      ["conversion", true],
      ["alpha-latency", false],
    ]);
    expect(body.realizedMeasurements).toMatchObject([
      { metricKey: "conversion", method: "holdout", estimate: 0.012 },
    ]);
  });

  it("answers 404 for another workspace's key exactly as for an unknown key", async () => {
    const other = await getJson<{ error: { code: string } }>("/api/v1/experiments/beta-001");
    const unknown = await getJson<{ error: { code: string } }>("/api/v1/experiments/alpha-999");
    expect(other.status).toBe(404);
    expect(unknown.status).toBe(404);
    expect(other.body.error.code).toBe(unknown.body.error.code);
  });
});

describe("results and realized measurements", () => {
  it("filter results by metric, primary and sample ratio mismatch", async () => {
    const flagged = await getJson<Page<{ experimentKey: string; srmFlagged: boolean }>>(
      "/api/v1/results?srmFlagged=true",
    );
    expect(flagged.body.items.map((item) => item.experimentKey)).toEqual(["alpha-002"]);
    const secondary = await getJson<Page<{ experimentKey: string }>>("/api/v1/results?primary=false");
    expect(secondary.body.total).toBe(1);
    const conversion = await getJson<Page<{ metricKey: string }>>("/api/v1/results?metric=conversion");
    expect(conversion.body.total).toBe(2);
  });

  it("lists realized measurements", async () => {
    const page = await getJson<Page<{ experimentKey: string }>>(
      "/api/v1/realized-measurements?method=holdout",
    );
    expect(page.body.items.map((item) => item.experimentKey)).toEqual(["alpha-001"]);
    expect((await getJson<Page<unknown>>("/api/v1/realized-measurements?method=retest")).body.total).toBe(0);
  });

  it("counts per metric and per workspace", async () => {
    const metrics = await getJson<{ items: { key: string; resultCount: number }[] }>("/api/v1/metrics");
    expect(metrics.body.items).toMatchObject([
      { key: "alpha-latency", resultCount: 2 },
      { key: "conversion", resultCount: 2 },
    ]);
    const workspace = await getJson<{ name: string; counts: Record<string, number> }>("/api/v1/workspace");
    expect(workspace.body.name).toBe("alpha");
    expect(workspace.body.counts).toMatchObject({
      metrics: 2,
      experiments: 3,
      results: 4,
      realizedMeasurements: 1,
    });
  });
});

describe("imports", () => {
  const header =
    "experiment,name,team,metric,metric_kind,direction,started_on,ended_on,decision,is_aa,stopped_early," +
    "planned_alpha,planned_power,planned_mde,control_n,treatment_n,control_conversions,treatment_conversions," +
    "control_mean,control_sd,treatment_mean,treatment_sd,lift,lift_se,lift_ci_low,lift_ci_high,ci_level,p_value,primary";
  const goodRow =
    "imp-001,Shorter form,growth,signup,binary,increase,2024-02-01,2024-02-14,shipped,no,no,,,,,,,,,,,,0.02,0.01,,,,,yes";
  const badRow =
    "imp-002,Longer form,growth,signup,binary,increase,2024-02-01,2024-02-14,maybe,no,no,,,,,,,,,,,,0.02,0.01,,,,,yes";

  function post(body: string, contentType: string, query = "", token = beta.tokens.write) {
    return app.request(`/api/v1/imports${query}`, {
      method: "POST",
      headers: { authorization: `Bearer ${token}`, "content-type": contentType },
      body,
    });
  }

  it("imports a text/csv body, then reports the same file as unchanged", async () => {
    const csv = `${header}\n${goodRow}\n`;
    const first = await post(csv, "text/csv", "?fileName=history.csv");
    expect(first.status).toBe(200);
    expect(await first.json()).toMatchObject({
      outcome: "applied",
      rows: 1,
      created: 1,
      updated: 0,
      errors: [],
    });
    const again = await post(csv, "text/csv; charset=utf-8", "?fileName=history.csv");
    expect(await again.json()).toMatchObject({ outcome: "applied", created: 0, unchanged: 1 });
    const stored = await getJson<{ results: { lift: number }[] }>(
      "/api/v1/experiments/imp-001",
      beta.tokens.read,
    );
    expect(stored.body.results[0]?.lift).toBe(0.02);
  });

  it("runs a JSON dry run without writing", async () => {
    const csv = `${header}\n${goodRow.replace("imp-001", "imp-dry")}\n`;
    const response = await post(
      JSON.stringify({ fileName: "dry.csv", content: csv, dryRun: true }),
      "application/json",
    );
    expect(response.status).toBe(200);
    expect(await response.json()).toMatchObject({ outcome: "dry_run", created: 1 });
    expect((await getJson("/api/v1/experiments/imp-dry", beta.tokens.read)).status).toBe(404);
  });

  it("rejects a file with a bad row with 422, the envelope and the report, writing nothing", async () => {
    const csv = `${header}\n${goodRow.replace("imp-001", "imp-003")}\n${badRow}\n`;
    const response = await post(JSON.stringify({ fileName: "bad.csv", content: csv }), "application/json");
    expect(response.status).toBe(422);
    const body = (await response.json()) as {
      error: { code: string; issues: { path: string; row: number }[] };
      report: { outcome: string; importId: number; errors: { row: number; column: string }[] };
    };
    expect(body.error.code).toBe("unprocessable");
    expect(body.error.issues).toContainEqual(expect.objectContaining({ path: "decision", row: 3 }));
    expect(body.report.outcome).toBe("rejected");
    expect(body.report.errors).toContainEqual(expect.objectContaining({ row: 3, column: "decision" }));
    expect((await getJson("/api/v1/experiments/imp-003", beta.tokens.read)).status).toBe(404);
    // Every import is logged, the rejected one too, with its errors.
    const entry = await getJson<{ outcome: string; errors: unknown[]; tokenId: number }>(
      `/api/v1/imports/${body.report.importId}`,
      beta.tokens.read,
    );
    expect(entry.body).toMatchObject({ outcome: "rejected", tokenId: beta.tokenIds.write });
    expect(entry.body.errors.length).toBeGreaterThan(0);
  });

  it("keeps the import log newest first with a total", async () => {
    const log = await getJson<Page<{ id: number; fileName: string | null }>>(
      "/api/v1/imports?limit=2",
      beta.tokens.read,
    );
    expect(log.body.total).toBeGreaterThanOrEqual(5);
    const ids = log.body.items.map((item) => item.id);
    expect(ids).toEqual([...ids].sort((a, b) => b - a));
  });

  it("refuses other body types with a message saying what to send", async () => {
    const response = await post("a=b", "application/x-www-form-urlencoded");
    expect(response.status).toBe(415);
    const body = (await response.json()) as { error: { message: string } };
    expect(body.error.message).toContain("text/csv");
  });
});

describe("the history write hook (the server's review preparer listens to it)", () => {
  it("is called with the workspace after an applied import or a deletion, not after a read, a dry run or a rejected import", async () => {
    const writes: number[] = [];
    const hooked = createApp({ db: handle.db, onHistoryWrite: (workspaceId) => writes.push(workspaceId) });
    const header =
      "experiment,name,team,metric,metric_kind,direction,started_on,ended_on,decision,is_aa,stopped_early,lift,lift_se,primary";
    const send = (row: string, query = "") =>
      hooked.request(`/api/v1/imports?fileName=hook.csv${query}`, {
        method: "POST",
        headers: { authorization: `Bearer ${beta.tokens.write}`, "content-type": "text/csv" },
        body: `${header}\n${row}\n`,
      });
    const goodRow =
      "hook-001,Hook,growth,signup,binary,increase,2024-02-01,2024-02-14,shipped,no,no,0.02,0.01,yes";
    const read = await hooked.request("/api/v1/experiments", {
      headers: { authorization: `Bearer ${beta.tokens.read}` },
    });
    expect(read.status).toBe(200);
    const rejected = await send(
      "hook-002,Hook,growth,signup,binary,increase,2024-02-01,2024-02-14,maybe,no,no,0.02,0.01,yes",
    );
    expect(rejected.status).toBe(422);
    const dryRun = await send(goodRow, "&dryRun=true");
    expect(await dryRun.json()).toMatchObject({ outcome: "dry_run" });
    // A computation that writes nothing (a review run) does not call it either.
    const run = await hooked.request("/api/v1/review/runs", {
      method: "POST",
      headers: { authorization: `Bearer ${beta.tokens.read}`, "content-type": "application/json" },
      body: "{}",
    });
    expect(run.status).toBeLessThan(500);
    expect(writes).toEqual([]);
    const accepted = await send(goodRow);
    expect(accepted.status).toBe(200);
    expect(writes).toEqual([beta.id]);
    const deleted = await hooked.request("/api/v1/experiments/hook-001", {
      method: "DELETE",
      headers: { authorization: `Bearer ${beta.tokens.write}` },
    });
    expect(deleted.status).toBe(200);
    expect(writes).toEqual([beta.id, beta.id]);
  });
});
