import { describe, expect, it } from "vitest";
import { normalCdf, normalQuantile } from "../../src/stats/distributions.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { createRandom } from "../../src/stats/random.ts";
import { winnersCurseBias } from "../../src/stats/winners-curse-bias.ts";
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
