import { describe, expect, it } from "vitest";
import { defaultDemoParameters } from "../../src/demo/demo-parameters.ts";
import { simulatePortfolio } from "../../src/demo/simulate-portfolio.ts";
import { normalCdf, normalQuantile } from "../../src/stats/distributions.ts";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import { StatsInputError } from "../../src/stats/errors.ts";

const nullPrior: EffectPrior = {
  family: "assumed",
  components: [{ component: { kind: "point", at: 0 }, weight: 1 }],
};

/** |observed - expected| within four standard errors of a binomial share over n trials. */
function expectShare(quantity: string, successes: number, trials: number, expected: number): void {
  const standardError = Math.sqrt((expected * (1 - expected)) / trials);
  const observed = successes / trials;
  expect(
    Math.abs(observed - expected),
    `${quantity}: ${successes} of ${trials} = ${observed}, expected ${expected}, tolerance 4 SE = ${4 * standardError}`,
  ).toBeLessThan(4 * standardError);
}

describe("simulatePortfolio", () => {
  it("is reproducible and shapes its output as (y, s, trueEffect, shipped) arrays", () => {
    const first = simulatePortfolio({ seed: 3, tests: 2000 });
    expect(simulatePortfolio({ seed: 3, tests: 2000 })).toEqual(first);
    expect(simulatePortfolio({ seed: 4, tests: 2000 }).y).not.toEqual(first.y);
    for (const column of [first.y, first.s, first.trueEffect, first.shipped])
      expect(column.length).toBe(2000);
    expect(first.prior).toBe(defaultDemoParameters.metrics.conversion.prior);
    first.y.forEach((y, index) => {
      expect(first.s[index]!).toBeGreaterThan(0);
      expect(first.shipped[index]).toBe(y > first.criticalZ * first.s[index]!);
    });
    expect(first.criticalZ).toBe(normalQuantile(0.975));
  });

  it("ships a null test alpha / 2 of the time (the upper tail of a two-sided 5 % test; statistics.md section 0)", () => {
    const portfolio = simulatePortfolio({ seed: 8, tests: 20000, prior: nullPrior });
    expectShare("null tests shipped", portfolio.shipped.filter(Boolean).length, 20000, 0.025);
  });

  it("matches the expected number shipped, sum of P(ship_i) = 1 - Phi(z - theta_i / s_i) (statistics.md section 8)", () => {
    for (const family of ["conversion", "revenue", "retention"] as const) {
      const portfolio = simulatePortfolio({ seed: 21, tests: 5000, family });
      let expected = 0;
      let variance = 0;
      portfolio.trueEffect.forEach((theta, index) => {
        const probability = 1 - normalCdf(portfolio.criticalZ - theta / portfolio.s[index]!);
        expected += probability;
        variance += probability * (1 - probability);
      });
      const shipped = portfolio.shipped.filter(Boolean).length;
      expect(
        Math.abs(shipped - expected),
        `${family}: shipped ${shipped}, expected ${expected}, tolerance ${4 * Math.sqrt(variance)}`,
      ).toBeLessThan(4 * Math.sqrt(variance));
    }
  });

  it("draws y | theta ~ N(theta, s^2) when nobody peeks", () => {
    const portfolio = simulatePortfolio({ seed: 5, tests: 20000, family: "revenue" });
    const zs = portfolio.y.map((y, index) => (y - portfolio.trueEffect[index]!) / portfolio.s[index]!);
    const mean = zs.reduce((sum, z) => sum + z, 0) / zs.length;
    const variance = zs.reduce((sum, z) => sum + (z - mean) ** 2, 0) / (zs.length - 1);
    expect(Math.abs(mean)).toBeLessThan(4 / Math.sqrt(zs.length));
    expect(Math.abs(variance - 1)).toBeLessThan(4 * Math.sqrt(2 / zs.length));
    expect(portfolio.stoppedEarly.some(Boolean)).toBe(false);
  });

  it("inflates the false-win rate when every test peeks at four equally spaced looks", () => {
    // Repeated significance tests at nominal two-sided 0.05 with K = 4 equally spaced looks have
    // overall level 0.126 (Armitage, McPherson & Rowe 1969, JRSS A 132:235; Jennison & Turnbull
    // 2000, "Group Sequential Methods", Table 1.1; value from memory). Upper tail: half of it.
    const portfolio = simulatePortfolio({ seed: 13, tests: 40000, prior: nullPrior, peekingShare: 1 });
    expectShare("peeked null tests shipped", portfolio.shipped.filter(Boolean).length, 40000, 0.126 / 2);
  });

  it("exaggerates early-stopped wins more than full-length ones", () => {
    const portfolio = simulatePortfolio({ seed: 17, tests: 20000, peekingShare: 0.5 });
    const excess = (stopped: boolean) => {
      const values = portfolio.y
        .map((y, index) => ({ y, index }))
        .filter(({ index }) => portfolio.shipped[index] && portfolio.stoppedEarly[index] === stopped)
        .map(({ y, index }) => y - portfolio.trueEffect[index]!);
      return values.reduce((sum, value) => sum + value, 0) / values.length;
    };
    expect(excess(true)).toBeGreaterThan(excess(false));
  });

  it("refuses a bad size, alpha or peeking share", () => {
    expect(() => simulatePortfolio({ seed: 1, tests: 0 })).toThrow(StatsInputError);
    expect(() => simulatePortfolio({ seed: 1, tests: 10, alpha: 1 })).toThrow(StatsInputError);
    expect(() => simulatePortfolio({ seed: 1, tests: 10, peekingShare: 2 })).toThrow(StatsInputError);
  });
});
