/**
 * Planned SE and quantile conventions. SE formulas: statistics.md section 7 conventions, worked
 * by hand here; quantiles: R type 7 (Hyndman & Fan 1996), values of R's quantile() (from memory
 * of R's documented definition: h = (n - 1) p + 1, linear interpolation).
 */
import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { drawSummary, sortedQuantile } from "../../src/stats/forecast-quantiles.ts";
import { criticalValueForAlpha } from "../../src/stats/forecast-rule.ts";
import { plannedSampleSizePerArm, plannedStandardError } from "../../src/stats/forecast-standard-error.ts";
import { expectClose } from "./tolerance.ts";

const exact = { relative: 1e-14 };

describe("plannedStandardError", () => {
  it("uses sqrt(2 (1 - p) / (n p)) on a baseline rate", () => {
    // n = 10000, p = 0.1: 2 * 0.9 / 1000 = 0.0018.
    const result = plannedStandardError({ nPerArm: 10_000, baselineRate: 0.1 });
    expectClose("rate SE", { n: 10_000, p: 0.1 }, result.standardError, Math.sqrt(0.0018), exact);
    expect(result.basis).toBe("rate");
  });

  it("derives n per arm from traffic x days / arms", () => {
    // 3000 users a day for 14 days over 3 arms: 14000 per arm.
    expect(plannedSampleSizePerArm({ dailyTraffic: 3000, runDays: 14, arms: 3 })).toBe(14_000);
    const result = plannedStandardError({
      dailyTraffic: 3000,
      runDays: 14,
      arms: 3,
      baselineMean: 20,
      baselineSd: 50,
    });
    // (50 / 20) sqrt(2 / 14000)
    expectClose("mean SE", {}, result.standardError, 2.5 * Math.sqrt(2 / 14_000), exact);
    expect(result.nPerArm).toBe(14_000);
  });

  it("keeps a stated SE and refuses what cannot give one", () => {
    expect(plannedStandardError({ standardError: 0.01 }).standardError).toBe(0.01);
    expect(() => plannedStandardError({ nPerArm: 100 })).toThrow(StatsInputError);
    expect(() => plannedStandardError({ baselineRate: 0.1 })).toThrow(/nPerArm/);
    expect(() => plannedStandardError({ nPerArm: 100, baselineRate: 1.2 })).toThrow(/baselineRate/);
    expect(() => plannedStandardError({ nPerArm: 100, baselineMean: 3 })).toThrow(/together/);
    expect(() => plannedSampleSizePerArm({ dailyTraffic: 10, runDays: 2, arms: 1 })).toThrow(/arms/);
  });
});

describe("forecast quantiles and rules", () => {
  it("matches R's type-7 quantiles", () => {
    // R: quantile(1:4, c(.05, .25, .5, .75, .95)) -> 1.15 1.75 2.50 3.25 3.85
    const summary = drawSummary(Float64Array.of(4, 2, 3, 1));
    expect(summary.quantiles.p5).toBeCloseTo(1.15, 14);
    expect(summary.quantiles.p25).toBeCloseTo(1.75, 14);
    expect(summary.quantiles.p50).toBeCloseTo(2.5, 14);
    expect(summary.quantiles.p75).toBeCloseTo(3.25, 14);
    expect(summary.quantiles.p95).toBeCloseTo(3.85, 14);
    // sd(1:4) = 1.290994 (R); Monte Carlo error = sd / 2.
    expectClose("sd", {}, summary.standardDeviation, Math.sqrt(5 / 3), exact);
    expectClose("monteCarloError", {}, summary.monteCarloError, Math.sqrt(5 / 3) / 2, exact);
    expect(Number.isNaN(sortedQuantile(new Float64Array(0), 0.5))).toBe(true);
  });

  it("turns a two-sided alpha into z* = Phi^-1(1 - alpha / 2)", () => {
    // qnorm(0.975) = 1.959963984540054 (R).
    expectClose("z* at 0.05", {}, criticalValueForAlpha(0.05), 1.959963984540054, { relative: 1e-9 });
    expect(() => criticalValueForAlpha(0)).toThrow(StatsInputError);
  });
});
