import { describe, expect, it } from "vitest";
import { assumedPrior } from "../../src/stats/assumed-prior.ts";
import { calibrateDefaults, meanRealWin } from "../../src/stats/calibrate-defaults.ts";
import { fragileValueLoss, transformPrior } from "../../src/stats/defaults-sensitivity.ts";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import { nullShare } from "../../src/stats/effect-prior.ts";
import type { ProgramEconomics } from "../../src/stats/test-value.ts";
import { expectClose } from "./tolerance.ts";

const prior: EffectPrior = {
  family: "symmetric",
  components: [
    { component: { kind: "point", at: 0 }, weight: 0.5 },
    { component: { kind: "normal", mean: 0, scale: 0.01 }, weight: 0.3 },
    { component: { kind: "normal", mean: 0, scale: 0.03 }, weight: 0.2 },
  ],
};
const program: ProgramEconomics = {
  prior,
  metric: { kind: "rate", baselineRate: 0.08 },
  dailyTraffic: 30_000,
  periodDays: 90,
  backlog: 500,
  arms: 2,
  valuePerLift: 1e7,
  launchCost: 3_000,
  lossPenalty: 0,
};

describe("calibrateDefaults", () => {
  const report = calibrateDefaults({
    program,
    mde: 0.02,
    current: { alpha: 0.1, nPerArm: 20_000, source: "test" },
    priorFor: (variant) => transformPrior(prior, variant),
    priorDescription: "test prior",
  });
  it("puts the textbook design at alpha 0.05 and power 0.8 at the MDE, and leaves nothing better than the optimum", () => {
    expectClose("textbook alpha", {}, report.textbook.alpha, 0.05, { relative: 1e-12 });
    expectClose("textbook power", {}, report.textbook.power, 0.8, { relative: 1e-12 });
    expect(report.textbook.valueLeftOnTable).toBeGreaterThanOrEqual(0);
    expect(report.current!.valueLeftOnTable).toBeGreaterThanOrEqual(0);
    expect(report.recommended.valueLeftOnTable).toBe(0);
    expect(report.optimum.check.isMaximum).toBe(true);
  });
  it("draws curves whose highest point is the recommendation", () => {
    const best = Math.max(...report.curves.valueVsAlpha.map((point) => point.expectedValue));
    expect(best).toBeLessThanOrEqual(report.recommended.expectedValue * (1 + 1e-12));
    const bestN = Math.max(...report.curves.valueVsN.map((point) => point.expectedValue));
    expect(bestN).toBeLessThanOrEqual(report.recommended.expectedValue * (1 + 1e-12));
    expect(report.curves.operatingCurves.map((curve) => curve.design)).toEqual([
      "recommended",
      "textbook",
      "current",
    ]);
    // An operating (ROC) curve rises with the share of nulls shipped (statistics.md section 2).
    for (const curve of report.curves.operatingCurves) {
      for (let i = 1; i < curve.points.length; i++) {
        expect(curve.points[i]!.falseShipRate).toBeLessThanOrEqual(
          curve.points[i - 1]!.falseShipRate + 1e-15,
        );
        expect(curve.points[i]!.trueShipRate).toBeLessThanOrEqual(curve.points[i - 1]!.trueShipRate + 1e-15);
      }
    }
  });
  it("reports the sensitivity with its fragility rule applied as stated", () => {
    expect(report.sensitivity.scenarios.map((scenario) => scenario.label)).toEqual([
      "winRateHalved",
      "winRateDoubled",
      "effectScaleHalved",
      "effectScaleDoubled",
    ]);
    for (const scenario of report.sensitivity.scenarios) {
      // The scenario's own optimum is at least as good as keeping the base recommendation.
      expect(scenario.recommended.expectedValue).toBeGreaterThanOrEqual(
        scenario.baseRecommendationValue * (1 - 1e-9),
      );
    }
    const fragile = report.sensitivity.scenarios.some(
      (scenario) => scenario.shareOfValueForgone > fragileValueLoss,
    );
    expect(report.sensitivity.fragile).toBe(fragile);
    expect(report.cautions.join(" ")).toMatch(/statistician/);
    expect(report.cautions.join(" ")).toMatch(/clinical/);
    expect(report.assumptions.length).toBeGreaterThan(5);
  });
  it("defaults the MDE to the prior's mean real win", () => {
    // Half-normal sizes: E[theta | theta > 0] = sigma sqrt(2 / pi).
    expectClose(
      "mean real win",
      {},
      meanRealWin(assumedPrior({ winRate: 0.2, effectScale: 0.01 })),
      0.01 * Math.sqrt(2 / Math.PI),
      {
        relative: 1e-12,
      },
    );
  });
});

describe("transformPrior", () => {
  it("scales the share of real effects and the effect sizes, keeping a proper mixture", () => {
    const halved = transformPrior(prior, { winRateFactor: 0.5, effectScaleFactor: 2 });
    expectClose("null share", {}, nullShare(halved), 0.75, { relative: 1e-14 });
    expect(halved.components.reduce((sum, entry) => sum + entry.weight, 0)).toBeCloseTo(1, 14);
    expect(halved.components[1]!.component).toEqual({ kind: "normal", mean: 0, scale: 0.02 });
    const doubled = transformPrior(prior, { winRateFactor: 4, effectScaleFactor: 1 });
    expect(nullShare(doubled)).toBe(0);
    expect(prior.components[0]!.weight).toBe(0.5);
  });
});
