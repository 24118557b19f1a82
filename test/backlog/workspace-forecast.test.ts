/**
 * Preparing a workspace forecast: priors fitted per metric family from the history, the current
 * rule from the planned alpha of the history, and the recommended rule from the defaults optimiser.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { savePlannedTest } from "../../src/backlog/planned-tests.ts";
import { ForecastSetupError, prepareWorkspaceForecast } from "../../src/backlog/workspace-forecast.ts";
import { experiments, metrics, results } from "../../src/db/schema.ts";
import { forecastBacklog } from "../../src/stats/forecast-backlog.ts";
import { criticalValueForAlpha } from "../../src/stats/forecast-rule.ts";
import { optimizeDefaults } from "../../src/stats/optimize-defaults.ts";
import { createRandom } from "../../src/stats/random.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedWorkspace, type TestDb } from "./seed.ts";

let handle: TestDb;
let workspaceId: number;

const base = {
  team: "Checkout",
  plannedStart: null,
  nPerArm: null,
  runDays: 14,
  arms: 2,
  baselineMean: null,
  baselineSd: null,
  standardError: null,
  priorOverride: null,
  status: "planned" as const,
  experiment: null,
};

beforeAll(async () => {
  handle = await createTestDb();
  workspaceId = await seedWorkspace(handle);
  const [orderRate] = await handle.db.select().from(metrics).limit(1);
  // An invented history of 40 conversion tests (70 % null), one of them an A/A test left out of the fit.
  const random = createRandom(99);
  for (let index = 0; index < 41; index++) {
    const [experiment] = await handle.db
      .insert(experiments)
      .values({ workspaceId, key: `past-${index}`, name: `Past ${index}`, isAa: index === 40 })
      .returning();
    const theta = random.uniform() < 0.7 ? 0 : 0.015 * random.normal();
    await handle.db.insert(results).values({
      experimentId: experiment!.id,
      metricId: orderRate!.id,
      isPrimary: true,
      input: {},
      inputForm: "standard_error",
      lift: theta + 0.006 * random.normal(),
      liftSe: 0.006,
    });
  }
  const now = new Date().toISOString();
  for (const [key, dailyTraffic] of [
    ["express-pay", 12_000],
    ["one-click", 8_000],
  ] as const)
    await savePlannedTest(
      handle.db,
      workspaceId,
      { ...base, key, name: key, metric: "order_rate", dailyTraffic, baselineRate: 0.04 },
      { mode: "create", now },
    );
});
afterAll(() => handle.dispose());

describe("prepareWorkspaceForecast", () => {
  it("fits the family prior to the history and uses the textbook level when none is planned", async () => {
    const prepared = await prepareWorkspaceForecast(handle.db, workspaceId, {
      rules: [{ kind: "current" }],
      seed: 3,
    });
    expect(prepared.priors).toHaveLength(1);
    expect(prepared.priors[0]).toMatchObject({ family: "conversion", source: "fitted", observations: 40 });
    expect(prepared.input.rules[0]!.criticalValue).toBeCloseTo(criticalValueForAlpha(0.05), 12);
    expect(prepared.input.tests.map((test) => test.name)).toEqual(["express-pay", "one-click"]);
    expect(prepared.assumptions.join(" ")).toMatch(/textbook alpha = 0.05/);
  });

  it("applies the defaults optimiser's threshold for the recommended rule", async () => {
    const economics = { valuePerLift: 2_000_000, launchCost: 5_000 };
    const prepared = await prepareWorkspaceForecast(handle.db, workspaceId, {
      rules: [{ kind: "current" }, { kind: "recommended" }],
      seed: 3,
      economics,
    });
    const optimum = optimizeDefaults({
      prior: prepared.priors[0]!.prior,
      metric: { kind: "rate", baselineRate: 0.04 },
      dailyTraffic: 10_000,
      periodDays: 90,
      backlog: 2,
      arms: 2,
      valuePerLift: economics.valuePerLift,
      launchCost: economics.launchCost,
      lossPenalty: 0,
    });
    expect(prepared.input.rules[1]!.criticalValue).toEqual([optimum.threshold, optimum.threshold]);
    await expect(
      prepareWorkspaceForecast(handle.db, workspaceId, { rules: [{ kind: "recommended" }], seed: 3 }),
    ).rejects.toThrow(ForecastSetupError);
  });

  it("draws each quarter's prior from bootstrap refits of the fit when asked", async () => {
    const prepared = await prepareWorkspaceForecast(handle.db, workspaceId, {
      rules: [{ kind: "current" }],
      seed: 3,
      simulations: 500,
      priorDraws: "bootstrap",
      bootstrapReplicates: 20,
    });
    expect(prepared.priors[0]).toMatchObject({ source: "fitted", bootstrapReplicates: 20 });
    const [first, second] = prepared.input.tests;
    expect(first!.priorReplicates).toHaveLength(20);
    // One array per family, so that the family's tests share the quarter's refit.
    expect(second!.priorReplicates).toBe(first!.priorReplicates);
    expect(prepared.assumptions.join(" ")).toMatch(/draws it from 20 bootstrap refits/);
    const forecast = forecastBacklog(prepared.input);
    expect(forecast.cautions.join(" ")).toMatch(/drawn from bootstrap refits/);
    await expect(
      prepareWorkspaceForecast(handle.db, workspaceId, {
        rules: [{ kind: "current" }],
        seed: 3,
        priorDraws: "bootstrap",
        bootstrapReplicates: 1,
      }),
    ).rejects.toThrow(/at least 2/);
  });
});
