/**
 * The backlog and forecast API in process (app.request): CRUD with field-named errors, the CSV
 * import all or nothing with row-and-column issues, roles, and a forecast that does not block
 * other requests while it runs.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { issueToken } from "../../src/api/tokens.ts";
import { plannedTests } from "../../src/db/schema.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedWorkspace, type TestDb } from "./seed.ts";

let handle: TestDb;
let app: ReturnType<typeof createApp>;
let writeToken: string;
let readToken: string;

beforeAll(async () => {
  handle = await createTestDb();
  const workspaceId = await seedWorkspace(handle);
  writeToken = (await issueToken(handle.db, { workspaceId, role: "write" })).token;
  readToken = (await issueToken(handle.db, { workspaceId, role: "read" })).token;
  app = createApp({ db: handle.db }, { logError: () => undefined });
});
afterAll(() => handle.dispose());

async function call(
  method: string,
  path: string,
  body?: unknown,
  token = writeToken,
  contentType = "application/json",
): Promise<Response> {
  return await app.request(`/api/v1${path}`, {
    method,
    headers: {
      authorization: `Bearer ${token}`,
      ...(body === undefined ? {} : { "content-type": contentType }),
    },
    ...(body === undefined ? {} : { body: typeof body === "string" ? body : JSON.stringify(body) }),
  });
}

const expressPay = {
  key: "express-pay",
  name: "Express pay button",
  team: "Checkout",
  metric: "order_rate",
  dailyTraffic: 12000,
  runDays: 14,
  baselineRate: 0.04,
};

describe("backlog API", () => {
  it("creates, reads, changes, lists and deletes a planned test", async () => {
    const created = await call("POST", "/backlog", expressPay);
    expect(created.status).toBe(201);
    const test = await created.json();
    // 12000 x 14 / 2 = 84000 per arm on p = 0.04 (statistics.md section 7).
    expect(test.plannedStandardError).toBeCloseTo(Math.sqrt((2 * 0.96) / (84_000 * 0.04)), 14);
    expect(test).toMatchObject({ status: "planned", arms: 2, metricFamily: "conversion" });

    expect((await call("POST", "/backlog", expressPay)).status).toBe(409);
    const read = await call("GET", "/backlog/express-pay", undefined, readToken);
    expect((await read.json()).name).toBe("Express pay button");

    const patched = await call("PATCH", "/backlog/express-pay", {
      runDays: 28,
      priorOverride: { winRate: 0.2, effectScale: 0.02 },
    });
    expect(patched.status).toBe(200);
    const after = await patched.json();
    expect(after.runDays).toBe(28);
    expect(after.priorOverride).toEqual({ winRate: 0.2, effectScale: 0.02 });

    const replaced = await call("PUT", "/backlog/express-pay", {
      ...expressPay,
      key: undefined,
      name: "Express pay v2",
      standardError: 0.01,
    });
    expect(replaced.status).toBe(200);
    expect((await replaced.json()).plannedStandardError).toBe(0.01);

    const listed = await call("GET", "/backlog", undefined, readToken);
    expect((await listed.json()).items.map((item: { key: string }) => item.key)).toEqual(["express-pay"]);
    expect((await call("DELETE", "/backlog/express-pay")).status).toBe(200);
    expect((await call("GET", "/backlog/express-pay")).status).toBe(404);
    expect((await call("DELETE", "/backlog/express-pay")).status).toBe(404);
  });

  it("names the field at fault and refuses writes with a read token", async () => {
    const noSize = await call("POST", "/backlog", { ...expressPay, key: "no-size", dailyTraffic: undefined });
    expect(noSize.status).toBe(400);
    const body = await noSize.json();
    expect(body.error.issues.map((issue: { path: string }) => issue.path)).toEqual(["nPerArm"]);
    const unknownMetric = await call("POST", "/backlog", { ...expressPay, key: "x", metric: "page_speed" });
    expect((await unknownMetric.json()).error.issues[0].path).toBe("metric");
    expect((await call("POST", "/backlog", { ...expressPay, key: "ro" }, readToken)).status).toBe(403);
  });

  it("imports a CSV all or nothing with row-and-column issues", async () => {
    const bad = "key,name,metric,standard_error\nok,Fine,order_rate,0.01\nbad,Bad,order_rate,-1\n";
    const rejected = await call("POST", "/backlog/imports?fileName=b.csv", bad, writeToken, "text/csv");
    expect(rejected.status).toBe(422);
    const body = await rejected.json();
    expect(body.error.issues).toEqual([{ path: "standard_error", row: 3, message: expect.any(String) }]);
    expect(await handle.db.select().from(plannedTests)).toEqual([]);
    const good =
      "key,name,team,metric,standard_error\nok,Fine,Search,order_rate,0.01\nalso,Also fine,Checkout,order_rate,0.015\n";
    const applied = await call("POST", "/backlog/imports", { fileName: "b.csv", content: good });
    expect(applied.status).toBe(200);
    expect(await applied.json()).toMatchObject({ outcome: "applied", created: 2 });
  });

  it("forecasts the backlog without blocking other requests", async () => {
    const fallbackPrior = { winRate: 0.2, effectScale: 0.02 };
    const small = await call(
      "POST",
      "/forecast",
      { sims: 500, seed: 5, fallbackPrior, rules: ["current", "alpha=0.2"] },
      readToken,
    );
    expect(small.status).toBe(200);
    const report = await small.json();
    expect(report.seed).toBe(5);
    expect(report.rules.map((rule: { label: string }) => rule.label)).toEqual(["current", "alpha=0.2"]);
    expect(report.priors[0]).toMatchObject({ family: "conversion", source: "assumed" });
    const page = await call("POST", "/forecast", { sims: 200, fallbackPrior, format: "html" }, readToken);
    expect(page.status).toBe(200);
    expect(page.headers.get("content-type")).toMatch(/text\/html/);
    expect(await page.text()).toContain("<svg");

    // Sequential quick requests while a forecast runs: each starts a timer tick after the one
    // before is answered (as a client's next request arrives through the event loop), so a
    // forecast that held the event loop would let through only those issued during its database
    // reads. The baseline counts them: the same forecast with 2 simulations.
    const answeredDuring = async (sims: number) => {
      let finished = false;
      const forecast = call("POST", "/forecast", { sims, seed: 6, fallbackPrior }, readToken).finally(() => {
        finished = true;
      });
      let answered = 0;
      while (!finished) {
        await new Promise((resolve) => setTimeout(resolve, 0));
        if (finished) break;
        const quick = await call("GET", "/backlog", undefined, readToken);
        expect(quick.status).toBe(200);
        if (!finished) answered++;
      }
      expect((await forecast).status).toBe(200);
      return answered;
    };
    const baseline = await answeredDuring(2);
    const during = await answeredDuring(400_000);
    expect(
      during,
      `quick requests answered: ${during} during the long forecast, ${baseline} during a 2-simulation one`,
    ).toBeGreaterThanOrEqual(baseline + 5);
  });

  it("explains why a forecast cannot run", async () => {
    const response = await call("POST", "/forecast", { sims: 100 }, readToken);
    expect(response.status).toBe(422);
    expect((await response.json()).error.message).toMatch(/too little history/);
    const badRule = await call("POST", "/forecast", { rules: ["strict"] }, readToken);
    expect(badRule.status).toBe(400);
  });

  it("refuses a forecast too large for one request, saying how many sims it would take", async () => {
    const fallbackPrior = { winRate: 0.2, effectScale: 0.02 };
    // 2 planned tests in 2 teams and 1 family: 4 groups x 2 rules x 5 figures = 40 per quarter.
    const tooMuchMemory = await call(
      "POST",
      "/forecast",
      { sims: 1_000_000, fallbackPrior, rules: ["current", "alpha=0.1"] },
      readToken,
    );
    expect(tooMuchMemory.status).toBe(422);
    const memoryError = (await tooMuchMemory.json()).error;
    expect(memoryError.message).toMatch(/at most 500000 sims/);
    expect(memoryError.message).toMatch(
      /CLI \(plumbline forecast --workspace "Larkspur Outfitters" --sims 1000000\)/,
    );
    expect(memoryError.issues).toEqual([{ path: "sims", message: memoryError.message }]);
    // 13 planned tests x 4 rules x 1000000 sims = 52 M draws, over the 50 M the API runs; the
    // largest allowed run also respects the memory bound: 20 M / (4 groups x 4 rules x 5) = 250000.
    const rows = Array.from(
      { length: 11 },
      (_, index) => `extra-${index},Extra ${index},Search,order_rate,0.01`,
    );
    const imported = await call("POST", "/backlog/imports", {
      fileName: "more.csv",
      content: ["key,name,team,metric,standard_error", ...rows].join("\n"),
    });
    expect(imported.status).toBe(200);
    const tooLong = await call(
      "POST",
      "/forecast",
      { sims: 1_000_000, fallbackPrior, rules: ["current", "alpha=0.1", "alpha=0.2", "alpha=0.01"] },
      readToken,
    );
    expect(tooLong.status).toBe(422);
    expect((await tooLong.json()).error.message).toMatch(
      /^sims 1000000 x 13 planned tests x 4 rule\(s\) is 52000000 draws; the API runs at most 50000000 in one request: ask for at most 250000 sims/,
    );
  });
});
