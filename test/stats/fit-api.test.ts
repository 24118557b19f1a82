/** POST /api/v1/fit on an invented stored history (test/helpers/calibration-history.ts). */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { fitEffectPrior } from "../../src/stats/fit-effect-prior.ts";
import { seedCalibrationHistory } from "../helpers/calibration-history.ts";
import { createTestDb } from "../helpers/db.ts";

let database: Awaited<ReturnType<typeof createTestDb>>;
let token: string;

beforeAll(async () => {
  database = await createTestDb();
  ({ token } = await seedCalibrationHistory(database.db, "fit-api-books"));
});
afterAll(() => database.dispose());

async function post(body: unknown) {
  const app = createApp({ db: database.db });
  const response = await app.request("/api/v1/fit", {
    method: "POST",
    headers: { authorization: `Bearer ${token}`, "content-type": "application/json" },
    body: JSON.stringify(body),
  });
  // biome-ignore lint/suspicious/noExplicitAny: the test walks the JSON answer freely
  return { status: response.status, body: (await response.json()) as Record<string, any> };
}

describe("POST /api/v1/fit", () => {
  it("fits the family's primary results, leaving out and counting A/A and SRM-flagged ones", async () => {
    const { status, body } = await post({ metricFamily: "signup", family: "symmetric", posteriors: true });
    expect(status).toBe(200);
    expect(body.counts).toEqual({ used: 40, leftOutAa: 1, leftOutSampleRatioMismatch: 1 });
    expect(body.converged).toBe(true);
    expect(body.optimalityGap).toBeLessThanOrEqual(1e-6);
    // The same fit as the pure function on the stored (y, s) pairs.
    const observations = (body.posteriors as { y: number; s: number }[]).map(({ y, s }) => ({ y, s }));
    const direct = fitEffectPrior(observations, { family: "symmetric" });
    expect(body.logLik).toBeCloseTo(direct.logLik, 10);
    expect(body.posteriors).toHaveLength(40);
    const weights = (body.components as { weight: number }[]).reduce((sum, entry) => sum + entry.weight, 0);
    expect(weights).toBeCloseTo(1, 12);
    for (const key of ["summary", "density", "atoms", "assumptions", "cautions", "nullWeight", "iterations"])
      expect(body).toHaveProperty(key);
  });

  it("keeps A/A tests when asked, and reports all three families with auto", async () => {
    const { status, body } = await post({ metricFamily: "signup", includeAa: true });
    expect(status).toBe(200);
    expect(body.counts.used).toBe(41);
    expect((body.alternatives as { family: string }[]).map((entry) => entry.family)).toEqual([
      "symmetric",
      "skewed",
      "grid",
    ]);
  });

  it("gives seeded bootstrap intervals", async () => {
    const request = { metricFamily: "signup", family: "symmetric", bootstrap: 30, seed: 5 };
    const first = await post(request);
    const second = await post(request);
    expect(first.status).toBe(200);
    expect(first.body.intervals.replicates).toBe(30);
    expect(first.body.intervals.nullShare.lower).toBeLessThanOrEqual(first.body.intervals.nullShare.upper);
    expect(second.body.intervals).toEqual(first.body.intervals);
  });

  it("answers 422 for a family without results", async () => {
    const { status, body } = await post({ metricFamily: "nothing-here" });
    expect(status).toBe(422);
    expect(body.error.issues[0].path).toBe("metricFamily");
  });

  it("appears in the OpenAPI document", async () => {
    const response = await createApp({ db: database.db }).request("/api/openapi.json");
    const document = (await response.json()) as { paths: Record<string, unknown> };
    expect(Object.keys(document.paths)).toContain("/api/v1/fit");
  });
});
