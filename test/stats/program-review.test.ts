import { describe, expect, it } from "vitest";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { fitEffectPrior } from "../../src/stats/fit-effect-prior.ts";
import { programReview, type ReviewTest } from "../../src/stats/program-review.ts";
import { createRandom } from "../../src/stats/random.ts";
import { expectClose } from "./tolerance.ts";

// Known truth: the demo generator (src/demo) draws each test's true effect from a stated prior and
// simulates its arms, so the share of shipped wins that were not real, and the share of the claimed
// lift that is real, are known exactly for the simulated portfolio. Peeking is switched off: the
// review's model (y ~ N(theta, s^2), no optional stopping) is then the generator's.
const demo = generateDemo({ seed: 11, experiments: 3000, peekingShare: 0 });
const family = "conversion";
const rows = demo.truth.experiments.filter((row) => row.isPrimary && row.family === family);
const tests: ReviewTest[] = rows.map((row) => ({
  key: row.key,
  name: row.name,
  team: row.team,
  quarter: row.endedOn.slice(0, 4),
  decision: row.decision,
  y: row.observedLift,
  s: row.observedSe,
  isAa: row.isAa,
  sampleRatioMismatch: row.srmFlagged,
  stoppedEarly: row.stoppedEarly,
  realized: row.holdout
    ? { estimate: row.holdout.realizedLift, standardError: row.holdout.realizedSe, method: "holdout" }
    : null,
}));
const included = tests.filter((test) => !test.isAa && !test.sampleRatioMismatch);
const fit = fitEffectPrior(
  included.map((test) => ({ y: test.y, s: test.s })),
  { family: "skewed" },
);
const review = programReview({
  tests,
  fit,
  random: createRandom(5),
  settings: { winnersCurseReplicates: 200 },
});
const shippedTruth = rows.filter((row) => !row.isAa && !row.srmFlagged && row.decision === "shipped");

describe("programReview against the demo generator's known truth", () => {
  it("estimates the false discovery rate of shipped wins", () => {
    const trueFalse = shippedTruth.filter((row) => row.trueEffect <= 0).length;
    const trueRate = trueFalse / shippedTruth.length;
    // Monte Carlo error: given the data, the number of false wins is a sum of independent
    // Bernoulli(P(theta_i <= 0 | y_i)), so its sd is sqrt(sum p (1 - p)); allow 3 sd.
    const probabilities = review.tests
      .filter((row) => row.decision === "shipped")
      .map((row) => row.probabilityFalseWin);
    const monteCarloSd =
      Math.sqrt(probabilities.reduce((total, p) => total + p * (1 - p), 0)) / probabilities.length;
    const naiveRate = 0; // a naive review counts every shipped win as real
    expectClose(
      "false discovery rate of shipped",
      { shipped: review.shipped, naiveRate, trueRate },
      review.falseDiscoveryRate.estimate,
      trueRate,
      {
        absolute: 3 * monteCarloSd,
      },
    );
    expect(Math.abs(naiveRate - trueRate)).toBeGreaterThan(
      Math.abs(review.falseDiscoveryRate.estimate - trueRate),
    );
  });

  it("estimates the realization ratio of the claimed total", () => {
    const claimed = shippedTruth.reduce((total, row) => total + row.observedLift, 0);
    const trueRatio = shippedTruth.reduce((total, row) => total + row.trueEffect, 0) / claimed;
    // Monte Carlo error: sum theta_i - sum E[theta_i | y_i] has sd sqrt(sum Var(theta_i | y_i));
    // the interval half-width / z_0.975 is that sd divided by the claimed total. Allow 3 sd.
    const shipped = review.tests.filter((row) => row.decision === "shipped");
    const variance = shipped.reduce(
      (total, row) => total + ((row.shrunkUpper - row.shrunkLower) / (2 * 1.959964)) ** 2,
      0,
    );
    const tolerance = (3 * Math.sqrt(variance)) / claimed;
    const naiveRatio = 1; // no shrinkage: every claimed lift realizes in full
    expectClose(
      "realization ratio",
      { claimed, naiveRatio, trueRatio },
      review.realizationRatio.estimate,
      trueRatio,
      {
        absolute: tolerance,
      },
    );
    expect(Math.abs(naiveRatio - trueRatio)).toBeGreaterThan(
      Math.abs(review.realizationRatio.estimate - trueRatio),
    );
  });

  it("reports every block with its assumptions and cautions", () => {
    expect(review.counts.leftOut.aa).toBeGreaterThan(0);
    expect(review.counts.shipped + review.counts.notShipped + review.counts.pending).toBe(
      review.counts.included,
    );
    const matrix = review.confusionMatrix.overall;
    expectClose(
      "confusion matrix total",
      {},
      matrix.shippedRealWin + matrix.shippedNotRealWin,
      review.shipped,
      { absolute: 1e-9 },
    );
    expect(review.aa.interval?.lower).toBeLessThanOrEqual(review.aa.falsePositiveRate);
    expect(review.cautions.join(" ")).toMatch(/statistician/);
    expect(review.cautions.join(" ")).toMatch(/clinical or safety-critical/);
    expect(review.assumptions.statements.length).toBeGreaterThan(5);
    expect(review.realized?.count).toBeGreaterThan(0);
    expect(review.winnersCurseBias.frequentist.bias).toBeGreaterThan(0);
  });

  it("gives the same figures without the per-test table when it is not asked for", () => {
    const summaryOnly = programReview({
      tests,
      fit,
      random: createRandom(5),
      settings: { winnersCurseReplicates: 200 },
      includeTests: false,
    });
    expect(summaryOnly.tests).toEqual([]);
    const { tests: table, ...rest } = review;
    expect(table.length).toBe(review.counts.included);
    expect({ ...summaryOnly, tests: table }).toEqual({ ...rest, tests: table });
  });
});
