import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import { createRandom } from "../../src/stats/random.ts";
import {
  perfectInformationProfit,
  planTestAndRoll,
  type TestAndRollProblem,
  testAndRollErrorRate,
  testAndRollProfit,
  testAndRollSampleSize,
} from "../../src/stats/test-and-roll.ts";
import { expectClose } from "./tolerance.ts";

interface UnequalCase {
  readonly label: string;
  readonly population: number;
  readonly arms: readonly [readonly [number, number, number], readonly [number, number, number]];
  readonly optimumN1: number;
  readonly optimumN2: number;
  readonly optimumProfit: number;
  readonly checks: readonly { n1: number; n2: number; profit: number; errorRate: number }[];
}

// scipy quadrature of E[max of posterior means] and a scipy Nelder-Mead optimum
// (test/fixtures/test-and-roll/generate.py), independent of the closed forms used here.
const unequalFixture = JSON.parse(
  readFileSync(
    fileURLToPath(new URL("../fixtures/test-and-roll/unequal-priors.json", import.meta.url)),
    "utf8",
  ),
) as { cases: readonly UnequalCase[] };
// scipy quad is asked for 1e-13 relative.
const profitTolerance = { relative: 1e-11 };
const errorRateTolerance = { relative: 1e-9, absolute: 1e-12 };
// The profit is flat at its optimum (an error e in log n changes it by ~e^2): two optimisers
// agree on n to ~1e-5 and on the profit there to rounding.
const optimumNTolerance = { relative: 1e-4 };
const optimumProfitTolerance = { relative: 1e-12 };

// Feit & Berman (2019), "Test & Roll: Profit-Maximizing A/B Tests", Marketing Science 38:1038,
// worked example of their website: N = 100,000, mu = 0.68, sigma = 0.03, s = sqrt(0.68 x 0.32).
const exampleArm = { priorMean: 0.68, priorSd: 0.03, responseSd: Math.sqrt(0.68 * 0.32) };
const example: TestAndRollProblem = { population: 100_000, arms: [exampleArm, exampleArm] };

describe("test & roll (Feit & Berman 2019)", () => {
  it("gives n* = 2,284 per arm on the website example", () => {
    expect(Math.round(testAndRollSampleSize(100_000, 0.03, Math.sqrt(0.68 * 0.32)))).toBe(2284);
    expect(planTestAndRoll(example).nPerArm).toBe(2284);
  });

  it("reproduces their symmetric expected-profit formula and the perfect-information profit", () => {
    // Feit & Berman sec. 3 (symmetric normal priors):
    // E[profit] = (N - 2n) [mu + sqrt(2) sigma^2 / (sqrt(pi) sqrt(2 sigma^2 + 2 s^2 / n))] + 2 n mu,
    // perfect information N (mu + sigma / sqrt(pi)).
    const { priorMean: mu, priorSd: sigma, responseSd: s } = exampleArm;
    const N = 100_000;
    for (const n of [100, 1000, 2284, 10_000]) {
      const formula =
        (N - 2 * n) *
          (mu +
            (Math.SQRT2 * sigma * sigma) /
              (Math.sqrt(Math.PI) * Math.sqrt(2 * sigma ** 2 + (2 * s ** 2) / n))) +
        2 * n * mu;
      expectClose("expected profit", { n }, testAndRollProfit(example, n, n), formula, { relative: 1e-13 });
    }
    expectClose(
      "perfect information profit",
      example,
      perfectInformationProfit(example),
      N * (mu + sigma / Math.sqrt(Math.PI)),
      {
        relative: 1e-14,
      },
    );
    const plan = planTestAndRoll(example);
    expectClose("regret", example, plan.regret, plan.perfectInformationProfit - plan.expectedProfit, {
      relative: 1e-12,
    });
  });

  it("n* maximises the expected profit (whole neighbours are no better)", () => {
    const best = testAndRollProfit(example, 2284, 2284);
    for (const n of [2200, 2283, 2285, 2400])
      expect(testAndRollProfit(example, n, n)).toBeLessThanOrEqual(best);
  });

  it("error rate equals 1/2 - arctan(sigma sqrt(n) / s) / pi and a seeded simulation", () => {
    // Sheppard's orthant formula on (D, Dhat), corr^2 = 2 sigma^2 / (2 sigma^2 + 2 s^2 / n); derived, not from the paper.
    const n = 2284;
    const { priorSd: sigma, responseSd: s } = exampleArm;
    const closedForm = 0.5 - Math.atan((sigma * Math.sqrt(n)) / s) / Math.PI;
    expectClose("error rate", { n }, testAndRollErrorRate(example, n, n), closedForm, { relative: 1e-10 });
    const random = createRandom(2019);
    const draws = 200_000;
    let wrong = 0;
    let profit = 0;
    let profitSquares = 0;
    const se = s / Math.sqrt(n);
    for (let i = 0; i < draws; i++) {
      const m1 = 0.68 + sigma * random.normal();
      const m2 = 0.68 + sigma * random.normal();
      const y1 = m1 + se * random.normal();
      const y2 = m2 + se * random.normal();
      const deployed = y1 > y2 ? m1 : m2;
      if (deployed < Math.max(m1, m2)) wrong++;
      const total = n * m1 + n * m2 + (100_000 - 2 * n) * deployed;
      profit += total;
      profitSquares += total * total;
    }
    const rate = wrong / draws;
    expectClose("simulated error rate", { n, draws }, rate, closedForm, {
      absolute: 4 * Math.sqrt((closedForm * (1 - closedForm)) / draws),
    });
    const meanProfit = profit / draws;
    const profitError = Math.sqrt((profitSquares / draws - meanProfit ** 2) / draws);
    expectClose("simulated profit", { n, draws }, meanProfit, testAndRollProfit(example, n, n), {
      absolute: 4 * profitError,
    });
  });

  it("numerical optimum: matches the closed form on a symmetric problem and an exhaustive grid on an unequal one", () => {
    const nearlySymmetric: TestAndRollProblem = {
      population: 100_000,
      arms: [exampleArm, { ...exampleArm, priorMean: 0.68 + 1e-12 }],
    };
    const plan = planTestAndRoll(nearlySymmetric);
    expect(plan.method).toBe("numeric");
    expectClose("numeric n1", {}, plan.nByArmExact[0], 2283.890028194, { relative: 1e-5 });
    expectClose("numeric n2", {}, plan.nByArmExact[1], 2283.890028194, { relative: 1e-5 });
    const unequal: TestAndRollProblem = {
      population: 20_000,
      arms: [exampleArm, { priorMean: 0.7, priorSd: 0.02, responseSd: 0.45 }],
    };
    const numeric = planTestAndRoll(unequal);
    let best = { n1: 0, n2: 0, profit: Number.NEGATIVE_INFINITY };
    for (let n1 = 50; n1 <= 4000; n1 += 10) {
      for (let n2 = 50; n2 <= 4000; n2 += 10) {
        const profit = testAndRollProfit(unequal, n1, n2);
        if (profit > best.profit) best = { n1, n2, profit };
      }
    }
    expect(numeric.expectedProfit).toBeGreaterThanOrEqual(best.profit - 1e-9);
    expect(Math.abs(numeric.nByArm[0] - best.n1)).toBeLessThanOrEqual(20);
    expect(Math.abs(numeric.nByArm[1] - best.n2)).toBeLessThanOrEqual(20);
  });

  describe("unequal priors: the posterior-mean rule of Feit & Berman (2019, eq. 18) against scipy", () => {
    for (const row of unequalFixture.cases) {
      const problem: TestAndRollProblem = {
        population: row.population,
        arms: [
          { priorMean: row.arms[0][0], priorSd: row.arms[0][1], responseSd: row.arms[0][2] },
          { priorMean: row.arms[1][0], priorSd: row.arms[1][1], responseSd: row.arms[1][2] },
        ],
      };
      it(`${row.label}: profit and error rate at given sizes`, () => {
        for (const check of row.checks) {
          const inputs = { label: row.label, n1: check.n1, n2: check.n2 };
          expectClose(
            "profit",
            inputs,
            testAndRollProfit(problem, check.n1, check.n2),
            check.profit,
            profitTolerance,
          );
          expectClose(
            "error rate",
            inputs,
            testAndRollErrorRate(problem, check.n1, check.n2),
            check.errorRate,
            errorRateTolerance,
          );
        }
      });
      it(`${row.label}: the numerical optimum`, () => {
        const plan = planTestAndRoll(problem);
        expect(plan.method).toBe("numeric");
        expect(plan.nPerArm).toBeNull();
        const inputs = { label: row.label };
        expectClose("optimum n1", inputs, plan.nByArmExact[0], row.optimumN1, optimumNTolerance);
        expectClose("optimum n2", inputs, plan.nByArmExact[1], row.optimumN2, optimumNTolerance);
        expectClose(
          "profit at the optimum",
          inputs,
          testAndRollProfit(problem, plan.nByArmExact[0], plan.nByArmExact[1]),
          row.optimumProfit,
          optimumProfitTolerance,
        );
        // Rounding to whole users costs at most a hair of the optimum.
        expect(plan.expectedProfit).toBeLessThanOrEqual(row.optimumProfit * (1 + 1e-12));
        expect(plan.expectedProfit).toBeGreaterThan(row.optimumProfit * (1 - 1e-9));
      });
    }
  });

  it("rejects invalid inputs with a named parameter", () => {
    expect(() =>
      planTestAndRoll({ population: 100, arms: [exampleArm, { ...exampleArm, priorSd: 0 }] }),
    ).toThrow(/arms\[1\]\.priorSd/);
  });
});
