import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { seedCalibrationHistory } from "../helpers/calibration-history.ts";
import { createTestDb } from "../helpers/db.ts";

let database: Awaited<ReturnType<typeof createTestDb>>;
let token: string;

beforeAll(async () => {
  database = await createTestDb();
  ({ token } = await seedCalibrationHistory(database.db, "lumen-books"));
});
afterAll(() => database.dispose());

async function post(path: string, body: unknown) {
  const app = createApp({ db: database.db });
  const response = await app.request(path, {
    method: "POST",
    headers: { authorization: `Bearer ${token}`, "content-type": "application/json" },
    body: JSON.stringify(body),
  });
  return { status: response.status, body: (await response.json()) as Record<string, unknown> };
}

const economics = {
  metric: { kind: "rate", baselineRate: 0.05 },
  dailyTraffic: 40_000,
  periodDays: 90,
  backlog: 30,
  valuePerLift: 5e6,
  launchCost: 2_000,
};

describe("POST /api/v1/calibrate", () => {
  it("fits the workspace's prior (A/A and SRM-flagged results left out) and reports the current design", async () => {
    const { status, body } = await post("/api/v1/calibrate", {
      ...economics,
      prior: { source: "workspace", family: "signup" },
    });
    expect(status).toBe(200);
    const prior = body.prior as { source: string; observations: number };
    expect(prior.source).toBe("fitted");
    expect(prior.observations).toBe(40);
    const current = body.current as { alpha: number; nPerArm: number; valueLeftOnTable: number };
    expect(current.alpha).toBeCloseTo(0.05, 12);
    expect(current.nPerArm).toBe(15_000);
    expect(current.valueLeftOnTable).toBeGreaterThanOrEqual(0);
    for (const key of ["recommended", "textbook", "curves", "sensitivity", "assumptions", "cautions"]) {
      expect(body).toHaveProperty(key);
    }
  });

  it("refuses a family with too little history (422, the field named)", async () => {
    const { status, body } = await post("/api/v1/calibrate", {
      ...economics,
      prior: { source: "workspace", family: "none" },
    });
    expect(status).toBe(422);
    expect(JSON.stringify(body)).toMatch(/at least 20/);
  });

  it("validates the body (400)", async () => {
    const { status } = await post("/api/v1/calibrate", {
      ...economics,
      dailyTraffic: -1,
      prior: { source: "assumed", winRate: 0.1, effectScale: 0.02 },
    });
    expect(status).toBe(400);
  });
});

describe("POST /api/v1/calibrate/test-and-roll and /skew-check", () => {
  it("plans Feit & Berman's website example: 2,284 per arm", async () => {
    const { status, body } = await post("/api/v1/calibrate/test-and-roll", {
      population: 100_000,
      priorMean: 0.68,
      priorSd: 0.03,
      responseSd: Math.sqrt(0.68 * 0.32),
    });
    expect(status).toBe(200);
    expect(body.nPerArm).toBe(2284);
  });
  it("runs a seeded skew check and refuses an oversized one", async () => {
    const request = { payerShare: 0.05, logMean: 3, logSd: 2, n: 100, sims: 500, seed: 7 };
    const first = await post("/api/v1/calibrate/skew-check", request);
    const second = await post("/api/v1/calibrate/skew-check", request);
    expect(first.status).toBe(200);
    expect(first.body).toEqual(second.body);
    expect(first.body.offNominal).toBe(true);
    expect((await post("/api/v1/calibrate/skew-check", { ...request, n: 1_000_000, sims: 100 })).status).toBe(
      422,
    );
  });
  it("documents the three routes in the OpenAPI document", async () => {
    const app = createApp({ db: database.db });
    const document = (await (await app.request("/api/openapi.json")).json()) as {
      paths: Record<string, unknown>;
    };
    for (const path of [
      "/api/v1/calibrate",
      "/api/v1/calibrate/test-and-roll",
      "/api/v1/calibrate/skew-check",
    ]) {
      expect(document.paths).toHaveProperty(path);
    }
  });
});
