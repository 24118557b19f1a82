import { describe, expect, it } from "vitest";
import { createRandom } from "../../src/stats/random.ts";
import { metricMoments, simulateSkewedMetric } from "../../src/stats/skewed-metric-simulation.ts";
import { expectClose } from "./tolerance.ts";

describe("skew check: the Welch t-test on simulated metrics", () => {
  it("holds alpha on normal data, within Monte Carlo error", () => {
    // Welch (1947): for normal data the Welch test's size is close to nominal even at small n
    // (the Satterthwaite approximation is accurate; common practice).
    const input = { metric: { kind: "normal" as const, mean: 10, sd: 5 }, nPerArm: 20, simulations: 20_000 };
    const result = simulateSkewedMetric(input, createRandom(3));
    const error = Math.sqrt((0.05 * 0.95) / input.simulations);
    expectClose("false-positive rate", input, result.falsePositiveRate, 0.05, { absolute: 3 * error });
    expect(result.offNominal).toBe(false);
    // Power against the normal approximation, allowing for the t reference at 38 df and MC error.
    expectClose("power", input, result.power, result.nominalPower, {
      absolute: 3 * result.powerStandardError + 0.005,
    });
  });

  it("is visibly off for a strongly skewed metric at small n: 5 % payers, log-sd 2, 100 users per arm", () => {
    // With a skewness near 1,800 most samples hold a handful of payers; the Welch test is then far
    // too conservative: its actual false-positive rate is near 0.007, not 0.05 (this simulation).
    const input = {
      metric: { kind: "zeroInflatedLogNormal" as const, payerShare: 0.05, logMean: 3, logSd: 2 },
      nPerArm: 100,
      simulations: 4_000,
    };
    const result = simulateSkewedMetric(input, createRandom(1));
    expect(result.offNominal).toBe(true);
    expect(result.falsePositiveRate).toBeLessThan(0.025);
    expect(result.metricSkewness).toBeGreaterThan(1000);
  });

  it("holds alpha for a mildly skewed metric at an online sample size (5 % payers, log-sd 1, 5,000 per arm)", () => {
    // statistics.md section 9: the t-test is usually robust at online sample sizes (common practice).
    const input = {
      metric: { kind: "zeroInflatedLogNormal" as const, payerShare: 0.05, logMean: 3, logSd: 1 },
      nPerArm: 5_000,
      simulations: 1_000,
    };
    const result = simulateSkewedMetric(input, createRandom(5));
    expectClose("false-positive rate", input, result.falsePositiveRate, 0.05, {
      absolute: 3 * Math.sqrt((0.05 * 0.95) / input.simulations),
    });
  });

  it("moments of the zero-inflated log-normal match a large seeded sample", () => {
    const metric = { kind: "zeroInflatedLogNormal" as const, payerShare: 0.3, logMean: 1, logSd: 0.5 };
    const moments = metricMoments(metric);
    // Closed form: E[X] = p exp(mu + sigma^2 / 2).
    expectClose("mean", metric, moments.mean, 0.3 * Math.exp(1.125), { relative: 1e-14 });
    const random = createRandom(9);
    let sum = 0;
    let squares = 0;
    const draws = 400_000;
    for (let i = 0; i < draws; i++) {
      const value = random.uniform() < 0.3 ? Math.exp(1 + 0.5 * random.normal()) : 0;
      sum += value;
      squares += value * value;
    }
    const mean = sum / draws;
    const sd = Math.sqrt(squares / draws - mean * mean);
    expectClose("sample mean", metric, mean, moments.mean, { absolute: (4 * moments.sd) / Math.sqrt(draws) });
    expectClose("sample sd", metric, sd, moments.sd, { relative: 0.01 });
  });

  it("is reproducible with a seed and validates its inputs", () => {
    const input = { metric: { kind: "normal" as const, mean: 1, sd: 1 }, nPerArm: 30, simulations: 200 };
    expect(simulateSkewedMetric(input, createRandom(4))).toEqual(
      simulateSkewedMetric(input, createRandom(4)),
    );
    expect(() => simulateSkewedMetric({ ...input, nPerArm: 1 }, createRandom(4))).toThrow(/nPerArm/);
  });
});
