import { describe, expect, it } from "vitest";
import { normalCdf, normalQuantile } from "../../src/stats/distributions.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { createRandom } from "../../src/stats/random.ts";
import {
  bootstrapBiasMoments,
  expectedSelectionBias,
  momentsFromTests,
  winnersCurseBias,
} from "../../src/stats/winners-curse-bias.ts";
import { readReviewFixture } from "./review-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface WinnersCurseCase {
  y: number[];
  s: number[];
  thresholdZ: number;
  bias: number;
  launchedTotal: number;
}

const fixture = readReviewFixture<WinnersCurseCase>("winners-curse");

describe("winnersCurseBias formula against R (Lee & Shen 2018)", () => {
  it.each(fixture.cases.map((c) => [`${c.y.length} tests`, c] as const))("%s", (_, c) => {
    const tests = c.y.map((y, i) => ({ y, s: c.s[i] as number }));
    const result = winnersCurseBias(tests, { thresholdZ: c.thresholdZ, replicates: 0 });
    expectClose("bias", { n: c.y.length }, result.bias, c.bias, { relative: 1e-13 });
    expectClose("launched total", { n: c.y.length }, result.launchedTotal, c.launchedTotal, {
      relative: 1e-13,
      absolute: 1e-15,
    });
  });
});

describe("Lee & Shen (2018) simulation design", () => {
  // Their section 5: 30 experiments, true effects N(0.2, 0.7^2) truncated to (-1.5, 2), variances
  // inverse-gamma(shape 3, scale 1), launch at the one-sided 5 % threshold b = qnorm(0.95).
  const replications = 1000;
  const size = 30;
  const random = createRandom(2018);
  const threshold = normalQuantile(0.95);
  const lowerMass = normalCdf((-1.5 - 0.2) / 0.7);
  const upperMass = normalCdf((2 - 0.2) / 0.7);
  const estimates: number[] = [];
  const truths: number[] = [];
  let covered = 0;
  for (let r = 0; r < replications; r++) {
    const tests: { y: number; s: number }[] = [];
    let trueBias = 0;
    for (let i = 0; i < size; i++) {
      const theta = 0.2 + 0.7 * normalQuantile(lowerMass + (upperMass - lowerMass) * random.uniform());
      // Gamma(3, 1) as a sum of three unit exponentials; its inverse is the variance.
      const gamma =
        -Math.log(1 - random.uniform()) - Math.log(1 - random.uniform()) - Math.log(1 - random.uniform());
      const s = Math.sqrt(1 / gamma);
      const y = theta + s * random.normal();
      tests.push({ y, s });
      if (y / s > threshold) trueBias += y - theta;
    }
    const result = winnersCurseBias(tests, { thresholdZ: threshold, replicates: r < 100 ? 200 : 0, random });
    estimates.push(result.bias);
    truths.push(trueBias);
    if (result.interval && trueBias >= result.interval.lower && trueBias <= result.interval.upper) covered++;
  }
  const mean = (values: number[]) => values.reduce((a, b) => a + b, 0) / values.length;
  const standardDeviation = (values: number[]) => {
    const m = mean(values);
    return Math.sqrt(values.reduce((a, b) => a + (b - m) ** 2, 0) / (values.length - 1));
  };

  it("estimates the true bias on average over replications", () => {
    const difference = estimates.map((e, i) => e - (truths[i] as number));
    const monteCarloError = standardDeviation(difference) / Math.sqrt(replications);
    // Tolerance: 3 Monte Carlo standard errors of the mean difference plus 5 % of the true bias,
    // for the plug-in's own small bias (y_i in place of theta_i inside phi; Lee & Shen note the
    // estimator is approximately, not exactly, unbiased).
    const truth = mean(truths);
    const tolerance = 3 * monteCarloError + 0.05 * truth;
    expectClose("average bias estimate", { replications, size }, mean(estimates), truth, {
      absolute: tolerance,
    });
    expect(truth).toBeGreaterThan(0);
  });

  it("reports a bootstrap interval around the estimate", () => {
    // A loose check: the parametric bootstrap interval is for the bias estimate; it must not be degenerate.
    expect(covered).toBeGreaterThan(20);
  });

  it("refuses bad input", () => {
    expect(() => winnersCurseBias([{ y: 0.1, s: 0 }], { thresholdZ: 1.96, replicates: 0 })).toThrow(
      StatsInputError,
    );
    expect(() => winnersCurseBias([{ y: 0.1, s: 1 }], { thresholdZ: 1.96, replicates: 10 })).toThrow(
      StatsInputError,
    );
  });
});

describe("Lee & Shen's interval from the bootstrap distribution's exact moments", () => {
  // Reference: the parametric bootstrap itself, simulated (Lee & Shen 2018's interval by draws),
  // on 1,500 tests (above momentsFromTests) with 10,000 draws.
  const random = createRandom(20261206);
  const tests = Array.from({ length: 1500 }, () => {
    const s = 0.005 + 0.02 * random.uniform();
    const theta = random.uniform() < 0.7 ? 0 : 0.02 * random.normal();
    return { y: theta + s * random.normal(), s };
  });
  const threshold = 1.959964;
  const draws = 10_000;
  const simulated: number[] = [];
  const estimates = tests.map((test) => test.y);
  const errors = tests.map((test) => test.s);
  const thresholds = tests.map(() => threshold);
  for (let b = 0; b < draws; b++) {
    const redrawn = tests.map((test) => test.y + test.s * random.normal());
    simulated.push(expectedSelectionBias(redrawn, errors, thresholds));
  }
  simulated.sort((a, b) => a - b);
  const mean = simulated.reduce((sum, value) => sum + value, 0) / draws;
  const sd = Math.sqrt(simulated.reduce((sum, value) => sum + (value - mean) ** 2, 0) / (draws - 1));

  it("has the simulated bootstrap's mean and sd", () => {
    const moments = bootstrapBiasMoments(estimates, errors, thresholds);
    // The mean of 10,000 draws is within 4 of its standard errors (sd / 100) of the exact one; the
    // draws' sd within 4 standard errors (about sd / sqrt(2 * 10,000)).
    expect(Math.abs(moments.mean - mean)).toBeLessThanOrEqual((4 * sd) / Math.sqrt(draws));
    expect(Math.abs(Math.sqrt(moments.variance) - sd)).toBeLessThanOrEqual((4 * sd) / Math.sqrt(2 * draws));
  });

  it("gives the simulated percentile interval", () => {
    const result = winnersCurseBias(tests, { thresholdZ: threshold, replicates: 200, random, level: 0.95 });
    expect(tests.length).toBeGreaterThanOrEqual(momentsFromTests);
    expect(result.method).toMatch(/exact moments/);
    const at = (p: number) => simulated[Math.round(p * (draws - 1))] as number;
    // A 2.5 % percentile of 10,000 draws has standard error sqrt(p (1 - p) / B) / density, about
    // 0.027 sd for a near-normal distribution; allow 4 of them.
    const tolerance = 4 * 0.027 * sd;
    expect(Math.abs((result.interval?.lower as number) - at(0.025))).toBeLessThanOrEqual(tolerance);
    expect(Math.abs((result.interval?.upper as number) - at(0.975))).toBeLessThanOrEqual(tolerance);
  });
});
