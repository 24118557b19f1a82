import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { assumedPrior } from "../../src/stats/assumed-prior.ts";
import { normalPdf } from "../../src/stats/distributions.ts";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import { designBounds, optimizeDefaults } from "../../src/stats/optimize-defaults.ts";
import { integrateAdaptive } from "../../src/stats/prior-quadrature.ts";
import { type ProgramEconomics, standardErrorAt, valuePerPeriod } from "../../src/stats/test-value.ts";
import { expectClose } from "./tolerance.ts";

/** A fitted-like symmetric prior: a null and zero-mean normals (closed forms, fast). */
function symmetricPrior(nullWeight: number, scales: number[]): EffectPrior {
  return {
    family: "symmetric",
    components: [
      { component: { kind: "point", at: 0 }, weight: nullWeight },
      ...scales.map((scale) => ({
        component: { kind: "normal" as const, mean: 0, scale },
        weight: (1 - nullWeight) / scales.length,
      })),
    ],
  };
}

const baseProgram: ProgramEconomics = {
  prior: symmetricPrior(0.6, [0.005, 0.01, 0.02]),
  metric: { kind: "rate", baselineRate: 0.1 },
  dailyTraffic: 20_000,
  periodDays: 90,
  backlog: 200,
  arms: 2,
  valuePerLift: 1e6,
  launchCost: 2_000,
  lossPenalty: 0,
};

describe("optimizeDefaults", () => {
  it("agrees with an exhaustive fine grid on a small problem (brute force)", () => {
    const program: ProgramEconomics = { ...baseProgram, periodDays: 30, dailyTraffic: 5_000 };
    const optimum = optimizeDefaults(program);
    const bounds = designBounds(program);
    // 301 x 301 grid over z* in [-3, 8] and log n over the whole box.
    let best = { threshold: 0, nPerArm: 0, value: Number.NEGATIVE_INFINITY };
    const steps = 301;
    for (let i = 0; i < steps; i++) {
      const threshold = bounds.minThreshold + ((bounds.maxThreshold - bounds.minThreshold) * i) / (steps - 1);
      for (let j = 0; j < steps; j++) {
        const nPerArm = Math.exp(
          Math.log(bounds.minNPerArm) +
            ((Math.log(bounds.maxNPerArm) - Math.log(bounds.minNPerArm)) * j) / (steps - 1),
        );
        const value = valuePerPeriod(program, threshold, nPerArm);
        if (value > best.value) best = { threshold, nPerArm, value };
      }
    }
    const inputs = { program: "small", gridSteps: steps };
    expect(optimum.expectedValue).toBeGreaterThanOrEqual(best.value * (1 - 1e-12));
    expectClose("optimum value vs grid", inputs, optimum.expectedValue, best.value, { relative: 1e-3 });
    // Grid spacing: 11/300 in z*, log(max/min)/300 in log n; allow two cells.
    expectClose("threshold vs grid", inputs, optimum.threshold, best.threshold, { absolute: (2 * 11) / 300 });
    expectClose("log n vs grid", inputs, Math.log(optimum.nPerArm), Math.log(best.nPerArm), {
      absolute: (2 * Math.log(bounds.maxNPerArm / bounds.minNPerArm)) / 300,
    });
    expect(optimum.check.isMaximum).toBe(true);
  });

  it("shows its optimum is a maximum: no neighbour is better, gradient ~ 0 and curvature < 0 inside the box", () => {
    const optimum = optimizeDefaults({ ...baseProgram, backlog: 10_000 });
    expect(optimum.check.atBounds).toEqual([]);
    expect(optimum.check.backlogBinds).toBe(false);
    expect(optimum.check.isMaximum).toBe(true);
    expect(optimum.check.neighbours).toHaveLength(8);
    const scale = optimum.expectedValue;
    expect(Math.abs(optimum.check.gradient.threshold) / scale).toBeLessThan(1e-4);
    expect(Math.abs(optimum.check.gradient.logNPerArm) / scale).toBeLessThan(1e-4);
    expect(optimum.check.curvature.threshold).toBeLessThan(0);
    expect(optimum.check.curvature.logNPerArm).toBeLessThan(0);
  });

  it("recovers the Bayes rule with no launch cost and no loss penalty: E[theta | y = z* s] = 0", () => {
    // Decision theory (e.g. Berger 1985, Statistical Decision Theory and Bayesian Analysis, sec. 4.4):
    // with utility V theta for shipping and 0 otherwise, ship exactly when the posterior mean is positive.
    const prior = assumedPrior({ winRate: 0.1, lossRate: 0.3, effectScale: 0.02 });
    const program: ProgramEconomics = { ...baseProgram, prior, launchCost: 0, lossPenalty: 0 };
    const optimum = optimizeDefaults(program);
    const s = standardErrorAt(program.metric, optimum.nPerArm);
    const y = optimum.threshold * s;
    // Posterior mean at y by brute-force quadrature over the half-normal components.
    const density = (theta: number) =>
      theta === 0 ? 0 : ((theta > 0 ? 0.1 : 0.3) * 2 * normalPdf(theta / 0.02)) / 0.02;
    const likelihood = (theta: number) => normalPdf((y - theta) / s) / s;
    const numerator =
      integrateAdaptive((t) => t * density(t) * likelihood(t), -Infinity, 0, { tailScale: 0.02 }) +
      integrateAdaptive((t) => t * density(t) * likelihood(t), 0, Infinity, { tailScale: 0.02 });
    const denominator =
      0.6 * likelihood(0) +
      integrateAdaptive((t) => density(t) * likelihood(t), -Infinity, 0, { tailScale: 0.02 }) +
      integrateAdaptive((t) => density(t) * likelihood(t), 0, Infinity, { tailScale: 0.02 });
    const posteriorMean = numerator / denominator;
    expect(optimum.threshold).toBeGreaterThan(0);
    expectClose(
      "posterior mean at the threshold",
      { threshold: optimum.threshold, n: optimum.nPerArm },
      posteriorMean,
      0,
      {
        absolute: 1e-6 * 0.02,
      },
    );
  });

  it("with a fat-tailed prior runs more, smaller tests than with a normal prior of the same scale (Azevedo et al. 2020)", () => {
    // Azevedo, Deng, Montiel Olea, Rao & Weyl (2020), "A/B Testing with Fat Tails", JPE 128:4614:
    // with fat tails (t, 2 df) the optimal strategy runs many small tests to find the rare big wins.
    const halfT = (sign: 1 | -1) => ({ kind: "halfT" as const, sign, scale: 0.01, df: 2 });
    const halfNormal = (sign: 1 | -1) => ({ kind: "halfNormal" as const, sign, scale: 0.01 });
    const fat: EffectPrior = {
      family: "assumed",
      components: [
        { component: { kind: "point", at: 0 }, weight: 0.6 },
        { component: halfT(1), weight: 0.2 },
        { component: halfT(-1), weight: 0.2 },
      ],
    };
    const thin: EffectPrior = {
      family: "assumed",
      components: [
        { component: { kind: "point", at: 0 }, weight: 0.6 },
        { component: halfNormal(1), weight: 0.2 },
        { component: halfNormal(-1), weight: 0.2 },
      ],
    };
    const program: ProgramEconomics = {
      ...baseProgram,
      backlog: 100_000,
      dailyTraffic: 50_000,
      launchCost: 500,
    };
    const fatOptimum = optimizeDefaults({ ...program, prior: fat });
    const thinOptimum = optimizeDefaults({ ...program, prior: thin });
    expect(fatOptimum.nPerArm).toBeLessThan(thinOptimum.nPerArm);
    expect(fatOptimum.expectedValue).toBeGreaterThan(thinOptimum.expectedValue);
  });
});

describe("properties of the optimum", () => {
  it("a higher launch cost raises the threshold", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 100, max: 5_000, noNaN: true }),
        fc.double({ min: 1.5, max: 4, noNaN: true }),
        (cost, factor) => {
          const low = optimizeDefaults({ ...baseProgram, launchCost: cost });
          const high = optimizeDefaults({ ...baseProgram, launchCost: cost * factor });
          expect(high.threshold).toBeGreaterThan(low.threshold);
        },
      ),
      { numRuns: 8, seed: 11 },
    );
  });
  it("a higher win rate lowers the threshold", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.05, max: 0.3, noNaN: true }),
        fc.double({ min: 1.3, max: 2, noNaN: true }),
        (winRate, factor) => {
          const prior = (rate: number) => assumedPrior({ winRate: rate, lossRate: 0.2, effectScale: 0.01 });
          const low = optimizeDefaults({ ...baseProgram, prior: prior(winRate) });
          const high = optimizeDefaults({ ...baseProgram, prior: prior(winRate * factor) });
          expect(high.threshold).toBeLessThan(low.threshold);
        },
      ),
      { numRuns: 6, seed: 12 },
    );
  });
  it("more traffic never lowers the optimal expected value", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 2_000, max: 100_000, noNaN: true }),
        fc.double({ min: 1, max: 5, noNaN: true }),
        (traffic, factor) => {
          const low = optimizeDefaults({ ...baseProgram, dailyTraffic: traffic });
          const high = optimizeDefaults({ ...baseProgram, dailyTraffic: traffic * factor });
          expect(high.expectedValue).toBeGreaterThanOrEqual(low.expectedValue * (1 - 1e-9));
        },
      ),
      { numRuns: 8, seed: 13 },
    );
  });
  it("respects the maximum run length", () => {
    const optimum = optimizeDefaults({ ...baseProgram, backlog: 5 }, { maxDays: 7 });
    expect((2 * optimum.nPerArm) / baseProgram.dailyTraffic).toBeLessThanOrEqual(7 * (1 + 1e-12));
  });
});
