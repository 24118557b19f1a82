/**
 * The many-prior sums agree with summing the per-result columns of posteriorProbabilityColumns
 * (itself checked against posteriorOf, and that against scipy integration, in
 * posterior-probabilities.test.ts and posterior.test.ts), prior by prior: on priors that share
 * every component kind with different weights (as bootstrap refits do), including zero weights, a
 * half-t and results far from every component (the log-space fallback).
 */
import { describe, expect, it } from "vitest";
import type { EffectPrior, PriorComponent } from "../../src/stats/effect-prior.ts";
import { posteriorProbabilityColumns } from "../../src/stats/posterior-probabilities.ts";
import { type PosteriorSums, posteriorSumsUnderPriors } from "../../src/stats/posterior-sums.ts";
import { skewedComponents } from "../../src/stats/prior-grid.ts";
import { createRandom } from "../../src/stats/random.ts";

// Both paths add the same component figures with the same weights; only the order of rounding
// differs (the weights are normalized over the shared components here, over one prior's there).
const relativeTolerance = 1e-12;

const sharedComponents: PriorComponent[] = [
  { kind: "point", at: 0 },
  { kind: "normal", mean: 0, scale: 0.01 },
  { kind: "normal", mean: 0.004, scale: 0.03 },
  { kind: "uniform", lower: 0, upper: 0.02 },
  { kind: "uniform", lower: -0.05, upper: 0 },
  { kind: "halfNormal", sign: 1, scale: 0.015 },
  { kind: "halfT", sign: -1, scale: 0.01, df: 3 },
  { kind: "truncatedNormal", mean: 0.01, scale: 0.02, lower: -0.01, upper: 0.04 },
  { kind: "point", at: 0.03 },
];

function sumOf(values: Float64Array): number {
  let total = 0;
  for (const value of values) total += value;
  return total;
}

function expectRelativelyClose(name: string, actual: number, expected: number): void {
  const scale = Math.max(1, Math.abs(expected));
  if (!(Math.abs(actual - expected) <= relativeTolerance * scale))
    throw new Error(`${name}: actual ${actual}, expected ${expected}`);
}

type SummedFigure = "mean" | "probNull" | "probNegative" | "probPositive";

/** Each prior's sums against the summed columns of posteriorProbabilityColumns: the figures named, and every threshold. */
function expectSummedColumns(
  sums: readonly PosteriorSums[],
  priors: readonly EffectPrior[],
  y: Float64Array,
  s: Float64Array,
  thresholds: readonly number[],
  figures: readonly SummedFigure[],
): void {
  for (const [b, prior] of priors.entries()) {
    const columns = posteriorProbabilityColumns(prior, y, s, thresholds);
    const sum = sums[b] as PosteriorSums;
    for (const figure of figures)
      expectRelativelyClose(`prior ${b} ${figure}`, sum[figure], sumOf(columns[figure]));
    for (const [j, threshold] of thresholds.entries())
      expectRelativelyClose(
        `prior ${b} probAbove(${threshold})`,
        sum.probAbove[j] as number,
        sumOf(columns.probAbove[j] as Float64Array),
      );
  }
}

describe("posteriorSumsUnderPriors", () => {
  it("equals the summed columns of posteriorProbabilityColumns for each of 12 priors", () => {
    const random = createRandom(20261203);
    const priors: EffectPrior[] = Array.from({ length: 12 }, (_, b) => {
      const raw = sharedComponents.map(() => (random.uniform() < 0.3 ? 0 : random.uniform()));
      raw[b % sharedComponents.length] = 0.5;
      const total = raw.reduce((sum, value) => sum + value, 0);
      return {
        family: "assumed",
        components: sharedComponents.map((component, k) => ({
          component,
          weight: (raw[k] as number) / total,
        })),
      };
    });
    // A prior with a single point far from the results: its scaled likelihoods underflow.
    priors.push({ family: "assumed", components: [{ component: { kind: "point", at: 0.03 }, weight: 1 }] });
    const count = 500;
    const y = Float64Array.from({ length: count }, (_, i) =>
      i % 50 === 0 ? -2 + 0.1 * random.normal() : 0.03 * random.normal(),
    );
    const s = Float64Array.from({ length: count }, () => 0.002 + 0.02 * random.uniform());
    const thresholds = [0, 0.01];
    const sums = posteriorSumsUnderPriors(priors, y, s, thresholds);
    expect(sums).toHaveLength(priors.length);
    expectSummedColumns(sums, priors, y, s, thresholds, ["mean", "probNull", "probNegative", "probPositive"]);
  });

  it("on the skewed family's uniforms (linear-space path), equals the summed columns too", () => {
    const random = createRandom(20261207);
    const count = 2000;
    const y = Float64Array.from({ length: count }, (_, i) =>
      i % 100 === 0 ? 3 * random.normal() : i % 7 === 0 ? 0.2 * random.normal() : 0.03 * random.normal(),
    );
    const s = Float64Array.from({ length: count }, () => 0.001 + 0.03 * random.uniform());
    const components = skewedComponents({ y, s });
    const priors: EffectPrior[] = Array.from({ length: 5 }, () => {
      const raw = components.map((_, k) => (k === 0 ? 2 : random.uniform() < 0.6 ? 0 : random.uniform()));
      const total = raw.reduce((sum, value) => sum + value, 0);
      return {
        family: "skewed",
        components: components.map((component, k) => ({ component, weight: (raw[k] as number) / total })),
      };
    });
    const thresholds = [0, 0.004];
    const sums = posteriorSumsUnderPriors(priors, y, s, thresholds);
    expectSummedColumns(sums, priors, y, s, thresholds, ["mean", "probNegative", "probPositive"]);
  });

  it("refuses a result without a positive standard error, naming its index", () => {
    const prior: EffectPrior = {
      family: "assumed",
      components: [{ component: { kind: "point", at: 0 }, weight: 1 }],
    };
    expect(() => posteriorSumsUnderPriors([prior], [0.01, 0.02], [0.01, -1])).toThrow(/s\[1\]/);
  });
});
