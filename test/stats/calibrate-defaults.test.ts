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

describe("operating curves of the recommended, textbook and current designs", () => {
  // A program with no real losses: a null point mass and half-normal wins, so "not a real win"
  // is exactly the null and its ship rate is the one-sided false-win rate 1 - Phi(z*) = alpha / 2.
  const winsOnly = assumedPrior({ winRate: 0.3, lossRate: 0, effectScale: 0.02 });
  const winsProgram: ProgramEconomics = { ...program, prior: winsOnly };
  const report = calibrateDefaults({
    program: winsProgram,
    mde: 0.02,
    current: { alpha: 0.1, nPerArm: 20_000, source: "test" },
    priorFor: (variant) =>
      assumedPrior({ winRate: 0.3 * variant.winRateFactor, lossRate: 0, effectScale: 0.02 }),
    priorDescription: "test prior",
  });
  const designs = { recommended: report.recommended, textbook: report.textbook, current: report.current! };
  for (const curve of report.curves.operatingCurves) {
    const design = designs[curve.design];
    it(`${curve.design}: its point sits at alpha / 2 nulls shipped and at its own expected real wins`, () => {
      const inputs = { design: curve.design, alpha: design.alpha, nPerArm: design.nPerArm };
      expect(curve.nPerArm).toBe(design.nPerArm);
      // Definition of the two-sided level (statistics.md section 0): a null ships with alpha / 2.
      expectClose("falseShipRate", inputs, curve.designPoint.falseShipRate, design.alpha / 2, {
        relative: 1e-12,
      });
      const comparisons = design.testsPerPeriod * (program.arms - 1);
      expectClose(
        "trueShipRate x P(real win) x comparisons",
        inputs,
        curve.designPoint.trueShipRate * 0.3 * comparisons,
        design.expectedRealWins,
        { relative: 1e-12 },
      );
    });
  }
  it("at threshold 0 a half-normal win ships with 1/2 + asin(rho) / pi (Sheppard 1899 orthant formula)", () => {
    // theta ~ N(0, sigma^2) restricted to theta > 0 and y = theta + N(0, s^2): P(y > 0 | theta > 0)
    // = 2 P(theta > 0, y > 0) = 1/2 + asin(rho) / pi with rho = sigma / sqrt(sigma^2 + s^2).
    const curve = report.curves.operatingCurves[0]!;
    const atZero = curve.points.find((point) => Math.abs(point.alpha - 1) < 1e-12)!;
    const s = report.recommended.standardError * Math.sqrt(report.recommended.nPerArm / curve.nPerArm);
    const rho = 0.02 / Math.hypot(0.02, s);
    expectClose("trueShipRate at z = 0", { s }, atZero.trueShipRate, 0.5 + Math.asin(rho) / Math.PI, {
      relative: 1e-12,
    });
    expectClose("falseShipRate at z = 0", {}, atZero.falseShipRate, 0.5, { relative: 1e-15 });
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
