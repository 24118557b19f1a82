/** The review routes in process with app.request(). */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { issueToken } from "../../src/api/tokens.ts";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedHistory } from "./seed-history.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let app: ReturnType<typeof createApp>;
const tokens: Record<"read" | "write", string> = { read: "", write: "" };

function get(path: string, token = tokens.read) {
  return app.request(path, { headers: { authorization: `Bearer ${token}` } });
}

function post(path: string, body: unknown, token = tokens.write) {
  return app.request(path, {
    method: "POST",
    headers: { authorization: `Bearer ${token}`, "content-type": "application/json" },
    body: JSON.stringify(body),
  });
}

beforeAll(async () => {
  handle = await createTestDb();
  app = createApp({ db: handle.db }, { logError: () => undefined });
  const { workspaceId } = await seedHistory(
    handle.db,
    "quillfern",
    generateDemo({ seed: 6, experiments: 300 }).truth.experiments,
  );
  tokens.read = (await issueToken(handle.db, { workspaceId, role: "read" })).token;
  tokens.write = (await issueToken(handle.db, { workspaceId, role: "write" })).token;
}, 60_000);
afterAll(() => handle.dispose());

const query = "family=conversion&priorFamily=skewed";

describe("GET /api/v1/review", () => {
  it("computes the review, then answers the identical request from the cache", async () => {
    const first = await get(`/api/v1/review?${query}`);
    expect(first.status).toBe(200);
    const body = await first.json();
    expect(body.cached).toBe(false);
    expect(body.metricFamily).toBe("conversion");
    expect(body.cautions).toHaveLength(3);
    expect(body.falseDiscoveryRate.interval.lower).toBeGreaterThanOrEqual(0);
    expect(body.falseDiscoveryRate.interval.upper).toBeGreaterThanOrEqual(
      body.falseDiscoveryRate.interval.lower,
    );
    const second = await get(`/api/v1/review?${query}`);
    const again = await second.json();
    expect(again.cached).toBe(true);
    expect({ ...again, cached: false }).toEqual(body);
  }, 120_000);

  it("serves the per-test table as JSON and as escaped CSV, and the HTML report", async () => {
    const json = await (await get(`/api/v1/review/tests?${query}`)).json();
    expect(json.count).toBeGreaterThan(0);
    const csv = await get(`/api/v1/review/tests?${query}&format=csv`);
    expect(csv.headers.get("content-type")).toMatch(/text\/csv/);
    expect((await csv.text()).split("\r\n")).toHaveLength(json.count + 2);
    const html = await get(`/api/v1/review/report?${query}`);
    expect(html.headers.get("content-type")).toMatch(/text\/html/);
    expect(await html.text()).toContain("<svg");
  }, 120_000);

  it("validates the query and names the field", async () => {
    const response = await get("/api/v1/review?quarter=2026Q3&from=2026-01-01");
    expect(response.status).toBe(400);
    expect((await response.json()).error.issues[0].path).toBe("quarter");
    expect((await get("/api/v1/review?family=nothing")).status).toBe(422);
  });
});

describe("review runs", () => {
  async function poll(path: string) {
    for (;;) {
      const body = await (await get(path)).json();
      if (body.state !== "running") return body;
      await new Promise((resolve) => setTimeout(resolve, 20));
    }
  }

  it("starts a run, reports its stages, then serves the review it cached", async () => {
    const settings = { family: "conversion", priorFamily: "symmetric", bootstrap: 20, seed: 3 };
    const started = await post("/api/v1/review/runs", { settings, tests: true }, tokens.read);
    expect(started.status).toBe(202);
    const running = await started.json();
    expect(running.state).toBe("running");
    expect(started.headers.get("location")).toBe(`/api/v1/review/runs/${running.id}`);
    expect(running.review).toBeNull();
    const done = await poll(running.poll);
    expect(done.state).toBe("ready");
    expect(done.error).toBeNull();
    expect(done.includesTests).toBe(true);
    const messages = done.stages.map((stage: { message: string }) => stage.message);
    expect(messages[0]).toBe("reading the stored history");
    expect(messages).toContain("bootstrap refit 20 of 20");
    expect(messages.at(-1)).toBe("computing the review");
    expect(done.elapsedSeconds).toBeGreaterThan(0);
    // The run cached the review and its table: GET answers from the cache with the same document.
    const query = "family=conversion&priorFamily=symmetric&bootstrap=20&seed=3";
    const review = await (await get(`/api/v1/review?${query}`)).json();
    expect(review.cached).toBe(true);
    expect({ ...review, cached: false }).toEqual(done.review);
    expect((await (await get(`/api/v1/review/tests?${query}`)).json()).cached).toBe(true);
    // Started again, it is ready at once.
    const again = await post("/api/v1/review/runs", { settings, tests: true }, tokens.read);
    expect(again.status).toBe(200);
    const ready = await again.json();
    expect(ready.state).toBe("ready");
    expect(ready.cached).toBe(true);
    expect(ready.review.cached).toBe(true);
  }, 120_000);

  it("shares one computation between a run and the identical GET /review", async () => {
    const settings = { family: "conversion", priorFamily: "symmetric", bootstrap: 10, seed: 4 };
    const started = await (await post("/api/v1/review/runs", { settings }, tokens.read)).json();
    const review = await (
      await get("/api/v1/review?family=conversion&priorFamily=symmetric&bootstrap=10&seed=4")
    ).json();
    const done = await poll(started.poll);
    // Both got the result of one computation: neither came from the cache.
    expect(review.cached).toBe(false);
    expect(done.cached).toBe(false);
    expect({ ...review, cached: false }).toEqual(done.review);
    // The summary is cached but not its table: a run that asks for the table computes it.
    const withTable = await post("/api/v1/review/runs", { settings, tests: true }, tokens.read);
    expect(withTable.status).toBe(202);
    expect((await poll((await withTable.json()).poll)).state).toBe("ready");
  }, 120_000);

  it("reports a failed run with the error the request would have had, and 404 for unknown runs", async () => {
    const started = await post("/api/v1/review/runs", { settings: { family: "nothing" } }, tokens.read);
    expect(started.status).toBe(202);
    const failed = await poll((await started.json()).poll);
    expect(failed.state).toBe("failed");
    expect(failed.error.status).toBe(422);
    expect(failed.error.message).toMatch(/nothing/);
    const unknown = await get("/api/v1/review/runs/no-such-run");
    expect(unknown.status).toBe(404);
    expect((await unknown.json()).error.code).toBe("not_found");
    const invalid = await post("/api/v1/review/runs", { settings: { alpha: 2 } }, tokens.read);
    expect(invalid.status).toBe(400);
    expect((await invalid.json()).error.issues[0].path).toBe("settings.alpha");
  }, 120_000);
});

describe("saved reviews", () => {
  it("saves with a write token only, never overwrites, lists, shows and compares", async () => {
    expect((await post("/api/v1/reviews", { label: "q3" }, tokens.read)).status).toBe(403);
    const saved = await post("/api/v1/reviews", {
      label: "q3",
      settings: { family: "conversion", priorFamily: "skewed" },
    });
    expect(saved.status).toBe(201);
    expect((await post("/api/v1/reviews", { label: "q3", settings: { family: "conversion" } })).status).toBe(
      409,
    );
    expect(
      (
        await post("/api/v1/reviews", {
          label: "q3 strict",
          settings: { family: "conversion", priorFamily: "skewed", delta: 0.002 },
        })
      ).status,
    ).toBe(201);
    const list = await (await get("/api/v1/reviews")).json();
    expect(list.reviews.map((row: { label: string }) => row.label)).toEqual(["q3 strict", "q3"]);
    const shown = await (await get(`/api/v1/reviews/${encodeURIComponent("q3")}?include=tests`)).json();
    expect(shown.review.metricFamily).toBe("conversion");
    expect(shown.tests.length).toBeGreaterThan(0);
    const compared = await (
      await get(`/api/v1/reviews/compare?before=q3&after=${encodeURIComponent("q3 strict")}`)
    ).json();
    expect(compared.sameData).toBe(true);
    expect(compared.settingsChanged).toEqual(["delta"]);
    expect((await get("/api/v1/reviews/none")).status).toBe(404);
  }, 120_000);

  it("appears in the OpenAPI document", async () => {
    const document = await (await app.request("/api/openapi.json")).json();
    for (const path of [
      "/api/v1/review",
      "/api/v1/review/tests",
      "/api/v1/review/report",
      "/api/v1/reviews",
      "/api/v1/reviews/{label}",
      "/api/v1/reviews/compare",
    ]) {
      expect(Object.keys(document.paths), path).toContain(path);
    }
  });
});
