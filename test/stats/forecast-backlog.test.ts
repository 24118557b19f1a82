/**
 * Backlog forecast (statistics.md section 8) against references outside the simulation:
 * - scipy quad integrals of the shipping expectations (test/fixtures/forecast/generate.py) for a
 *   symmetric normal mixture, a skewed uniform mixture, half-normal and fat-tailed half-t priors;
 * - a single test with a two-point prior, worked by hand with the normal cdf.
 * Monte Carlo tolerance: a simulated mean may differ from its exact expectation by at most
 * 4 of the simulation's own standard errors (sd / sqrt(R)); a correct simulation fails one such
 * check with probability about 6e-5.
 */
import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import { normalCdf, normalSurvival } from "../../src/stats/distributions.ts";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import {
  type ForecastPlannedTest,
  forecastBacklog,
  type OutcomeSummary,
} from "../../src/stats/forecast-backlog.ts";
import { criticalValueForAlpha } from "../../src/stats/forecast-rule.ts";
import { expectClose } from "./tolerance.ts";

interface ExpectationCase {
  readonly prior: string;
  readonly standardError: number;
  readonly criticalValue: number;
  readonly threshold: number;
  readonly probabilityOfShipping: number;
  readonly probabilityOfRealWin: number;
  readonly expectedShippedEffect: number;
  readonly expectedShippedEstimate: number;
}

const fixture = JSON.parse(
  readFileSync(
    fileURLToPath(new URL("../fixtures/forecast/shipping-expectations.json", import.meta.url)),
    "utf8",
  ),
) as { priors: Record<string, EffectPrior>; cases: ExpectationCase[] };

const monteCarloMultiple = 4;

function expectWithinMonteCarlo(quantity: string, inputs: unknown, summary: OutcomeSummary, exact: number) {
  expectClose(quantity, inputs, summary.mean, exact, {
    absolute: monteCarloMultiple * summary.monteCarloError,
  });
}

describe("forecastBacklog: simulated means against exact expectations (scipy quad fixture)", () => {
  for (const priorName of ["normal", "skewed", "halfNormal", "fat"]) {
    it(`agrees within ${monteCarloMultiple} Monte Carlo standard errors for the ${priorName} prior`, () => {
      const prior = fixture.priors[priorName]!;
      const cases = fixture.cases.filter((entry) => entry.prior === priorName);
      const strict = cases.filter((entry) => entry.criticalValue > 1.5);
      const loose = cases.filter((entry) => entry.criticalValue < 1.5);
      // Three planned tests at each SE, the strict and loose rules on the same draws.
      const tests: ForecastPlannedTest[] = strict.flatMap((entry, index) =>
        [0, 1, 2].map((copy) => ({
          name: `${priorName}-${index}-${copy}`,
          team: copy === 0 ? "checkout" : "search",
          family: priorName,
          prior,
          standardError: entry.standardError,
        })),
      );
      const strictValue = strict[0]!.criticalValue;
      const looseValue = loose[0]!.criticalValue;
      const forecast = forecastBacklog({
        tests,
        rules: [
          { label: "strict", criticalValue: strictValue },
          { label: "loose", criticalValue: looseValue },
        ],
        simulations: 20_000,
        seed: 20240611,
      });
      for (const [ruleIndex, ruleCases] of [strict, loose].entries()) {
        const rule = forecast.rules[ruleIndex]!;
        const total = (pick: (entry: ExpectationCase) => number) =>
          3 * ruleCases.reduce((sum, entry) => sum + pick(entry), 0);
        const inputs = { prior: priorName, rule: rule.label, tests: tests.length };
        expectWithinMonteCarlo(
          "shipped",
          inputs,
          rule.shipped,
          total((entry) => entry.probabilityOfShipping),
        );
        expectWithinMonteCarlo(
          "realWins",
          inputs,
          rule.realWins,
          total((entry) => entry.probabilityOfRealWin),
        );
        expectWithinMonteCarlo(
          "falseWins",
          inputs,
          rule.falseWins,
          total((entry) => entry.probabilityOfShipping - entry.probabilityOfRealWin),
        );
        expectWithinMonteCarlo(
          "realizedLift",
          inputs,
          rule.realizedLift,
          total((entry) => entry.expectedShippedEffect),
        );
        expectWithinMonteCarlo(
          "claimedLift",
          inputs,
          rule.claimedLift,
          total((entry) => entry.expectedShippedEstimate),
        );
        expectWithinMonteCarlo(
          "liftGap",
          inputs,
          rule.liftGap,
          total((entry) => entry.expectedShippedEstimate - entry.expectedShippedEffect),
        );
        // The built-in exact expectations (src/stats/shipping-expectation.ts) against scipy.
        const exactTolerance = { relative: 1e-7, absolute: 1e-12 };
        expectClose(
          "expected shipped",
          inputs,
          rule.shipped.expected!,
          total((entry) => entry.probabilityOfShipping),
          exactTolerance,
        );
        expectClose(
          "expected realWins",
          inputs,
          rule.realWins.expected!,
          total((entry) => entry.probabilityOfRealWin),
          exactTolerance,
        );
        expectClose(
          "expected realizedLift",
          inputs,
          rule.realizedLift.expected!,
          total((entry) => entry.expectedShippedEffect),
          exactTolerance,
        );
        expectWithinMonteCarlo(
          "shipped vs built-in expectation",
          inputs,
          rule.shipped,
          rule.shipped.expected!,
        );
        expectWithinMonteCarlo(
          "realized vs built-in expectation",
          inputs,
          rule.realizedLift,
          rule.realizedLift.expected!,
        );
        // Claimed lift through s^2 f(threshold), f the predictive density (numerical for half-t).
        expectClose(
          "expected claimedLift",
          inputs,
          rule.claimedLift.expected!,
          total((entry) => entry.expectedShippedEstimate),
          exactTolerance,
        );
        expectClose(
          "expected liftGap",
          inputs,
          rule.liftGap.expected!,
          total((entry) => entry.expectedShippedEstimate - entry.expectedShippedEffect),
          exactTolerance,
        );
        expectWithinMonteCarlo(
          "claimed vs built-in expectation",
          inputs,
          rule.claimedLift,
          rule.claimedLift.expected!,
        );
        expectWithinMonteCarlo("gap vs built-in expectation", inputs, rule.liftGap, rule.liftGap.expected!);
        // Per test: the share of portfolios that shipped it is a binomial proportion.
        for (const [index, test] of rule.tests.entries()) {
          const exact = ruleCases[Math.floor(index / 3)]!.probabilityOfShipping;
          const binomialError = Math.sqrt((exact * (1 - exact)) / forecast.simulations);
          expectClose("simulatedShipShare", { test: test.name }, test.simulatedShipShare, exact, {
            absolute: monteCarloMultiple * binomialError,
          });
        }
        // The difference between the rules on common draws against the difference of expectations.
        if (ruleIndex === 1) {
          const difference = forecast.differences[0]!;
          for (const quantity of [
            "shipped",
            "realWins",
            "falseWins",
            "claimedLift",
            "realizedLift",
            "liftGap",
          ] as const)
            expectWithinMonteCarlo(
              `difference in ${quantity}`,
              inputs,
              difference[quantity],
              difference[quantity].expected!,
            );
        }
        // Team groups partition the portfolio.
        const teamShipped = rule.byTeam.reduce((sum, team) => sum + team.shipped.mean, 0);
        expectClose("sum of team shipped means", inputs, teamShipped, rule.shipped.mean, { relative: 1e-12 });
      }
    });
  }
});

describe("forecastBacklog: a single planned test with a two-point prior (worked by hand)", () => {
  // theta = 0 with probability 0.7, theta = 0.02 with probability 0.3; s = 0.01; alpha 0.05, so
  // z* = 1.959964 and the threshold is 0.0196. Worked with the normal cdf:
  //   P(ship | theta = 0)    = 1 - Phi(1.959964)        = 0.025
  //   P(ship | theta = 0.02) = 1 - Phi(1.959964 - 2)    = Phi(0.040036) = 0.515968
  //   E[shipped] = 0.7 * 0.025 + 0.3 * 0.515968; E[real wins] = 0.3 * 0.515968;
  //   E[realized] = 0.02 * E[real wins]; P(realized >= 0.02) = E[real wins].
  const prior: EffectPrior = {
    family: "grid",
    components: [
      { component: { kind: "point", at: 0 }, weight: 0.7 },
      { component: { kind: "point", at: 0.02 }, weight: 0.3 },
    ],
  };
  const standardError = 0.01;
  const criticalValue = criticalValueForAlpha(0.05);
  const nullShip = normalSurvival(criticalValue);
  const effectShip = normalCdf(2 - criticalValue);
  const simulations = 40_000;
  const forecast = forecastBacklog({
    tests: [{ name: "one", team: "growth", family: "conversion", prior, standardError }],
    rules: [{ label: "alpha=0.05", criticalValue }],
    simulations,
    seed: 7,
    target: 0.02,
  });
  const rule = forecast.rules[0]!;
  const binomial = (p: number) => monteCarloMultiple * Math.sqrt((p * (1 - p)) / simulations);

  it("ships, wins and loses with the hand-worked probabilities", () => {
    expectClose("P(ship | theta = 0)", {}, nullShip, 0.025, { absolute: 1e-9 }); // alpha / 2
    const shipped = 0.7 * nullShip + 0.3 * effectShip;
    expectClose("shipped", {}, rule.shipped.mean, shipped, { absolute: binomial(shipped) });
    expectClose("realWins", {}, rule.realWins.mean, 0.3 * effectShip, {
      absolute: binomial(0.3 * effectShip),
    });
    expectClose("falseWins", {}, rule.falseWins.mean, 0.7 * nullShip, { absolute: binomial(0.7 * nullShip) });
    expectClose("realizedLift", {}, rule.realizedLift.mean, 0.02 * 0.3 * effectShip, {
      absolute: 0.02 * binomial(0.3 * effectShip),
    });
    expectClose("P(realized >= target)", {}, rule.probabilityToReachTarget!.estimate, 0.3 * effectShip, {
      absolute: binomial(0.3 * effectShip),
    });
    expect(rule.alpha).toBeCloseTo(0.05, 12);
  });

  it("has the quantiles of a 0/1 count", () => {
    // P(ship) is about 0.17, below 0.75: the 5-75 % quantiles are 0 and the 95 % quantile is 1.
    expect(rule.shipped.quantiles).toEqual({ p5: 0, p25: 0, p50: 0, p75: 0, p95: 1 });
  });
});

function portfolio(prior: EffectPrior): ForecastPlannedTest[] {
  return Array.from({ length: 40 }, (_, index) => ({
    name: `idea ${index}`,
    team: index % 2 ? "checkout" : "search",
    family: index % 3 ? "conversion" : "revenue",
    prior,
    standardError: 0.005 + 0.0005 * index,
  }));
}

describe("forecastBacklog: common random numbers and seeds", () => {
  const prior = fixture.priors["fat"]!;
  const input = {
    tests: portfolio(prior),
    rules: [
      { label: "current", criticalValue: criticalValueForAlpha(0.05) },
      { label: "alpha=0.1", criticalValue: criticalValueForAlpha(0.1) },
    ],
    simulations: 4000,
    seed: 99,
    target: 0.05,
    expectations: null,
  };
  const forecast = forecastBacklog(input);

  it("gives the difference between two rules a smaller spread than either rule", () => {
    const [current, other] = forecast.rules;
    const difference = forecast.differences[0]!;
    expect(difference.label).toBe("alpha=0.1");
    expect(difference.baseline).toBe("current");
    for (const quantity of ["shipped", "realizedLift", "claimedLift"] as const) {
      const spread = difference[quantity].standardDeviation;
      const message = `${quantity}: sd of difference ${spread}, sd current ${current![quantity].standardDeviation}, sd other ${other![quantity].standardDeviation}`;
      expect(spread, message).toBeLessThan(current![quantity].standardDeviation);
      expect(spread, message).toBeLessThan(other![quantity].standardDeviation);
    }
    // A looser rule ships a superset on the same draws: no portfolio ships fewer.
    expect(difference.shipped.quantiles.p5).toBeGreaterThanOrEqual(0);
    expectClose("mean difference", {}, difference.shipped.mean, other!.shipped.mean - current!.shipped.mean, {
      relative: 1e-9,
    });
  });

  it("gives every difference a smaller spread than the same difference from independent runs", () => {
    // Independent runs (different seeds) have Var(difference) = Var(a) + Var(b).
    const independent = forecastBacklog({ ...input, seed: 12345 });
    for (const quantity of [
      "shipped",
      "realWins",
      "falseWins",
      "realizedLift",
      "claimedLift",
      "liftGap",
    ] as const) {
      const common = forecast.differences[0]![quantity].standardDeviation;
      const separate = Math.hypot(
        forecast.rules[0]![quantity].standardDeviation,
        independent.rules[1]![quantity].standardDeviation,
      );
      expect(common, `${quantity}: common ${common}, independent ${separate}`).toBeLessThan(separate);
    }
  });

  it("reproduces with the same seed, echoes it, and changes with another seed", () => {
    expect(forecastBacklog(input)).toEqual(forecast);
    expect(forecast.seed).toBe(99);
    expect(forecast.simulations).toBe(4000);
    const other = forecastBacklog({ ...input, seed: 100 });
    expect(other.rules[0]!.realizedLift.mean).not.toBe(forecast.rules[0]!.realizedLift.mean);
  });

  it("orders quantiles, carries assumptions and cautions, and reports per team and family", () => {
    const rule = forecast.rules[0]!;
    const q = rule.realizedLift.quantiles;
    expect(q.p5 <= q.p25 && q.p25 <= q.p50 && q.p50 <= q.p75 && q.p75 <= q.p95).toBe(true);
    expect(rule.byTeam.map((team) => team.name)).toEqual(["search", "checkout"]);
    expect(rule.byFamily.map((family) => family.name).sort()).toEqual(["conversion", "revenue"]);
    expect(forecast.assumptions.length).toBeGreaterThan(3);
    expect(forecast.cautions.join(" ")).toMatch(/statistician/);
    expect(rule.shipped.expected).toBeNull();
  });

  it("uses injected analytic expectations beside the simulated means", () => {
    const calls: number[] = [];
    const withExpectations = forecastBacklog({
      ...input,
      simulations: 100,
      expectations: {
        probabilityOfShipping: (_prior, _s, threshold) => {
          calls.push(threshold);
          return 0.5;
        },
        probabilityOfShippingAbove: () => 0.25,
        expectedShippedEffect: () => 0.001,
        predictiveDensity: () => 10,
      },
    });
    const rule = withExpectations.rules[0]!;
    expect(rule.shipped.expected).toBeCloseTo(20, 12);
    expect(rule.realWins.expected).toBeCloseTo(10, 12);
    expect(rule.falseWins.expected).toBeCloseTo(10, 12);
    expect(rule.realizedLift.expected).toBeCloseTo(0.04, 12);
    // Gap: sum of s^2 f over the 40 tests, s = 0.005 + 0.0005 i.
    const squares = Array.from({ length: 40 }, (_, index) => (0.005 + 0.0005 * index) ** 2);
    expect(rule.liftGap.expected).toBeCloseTo(10 * squares.reduce((sum, value) => sum + value, 0), 12);
    expect(rule.claimedLift.expected).toBeCloseTo(rule.realizedLift.expected! + rule.liftGap.expected!, 12);
    // Thresholds are on the lift scale: z* s.
    expectClose("first threshold", {}, calls[0]!, criticalValueForAlpha(0.05) * 0.005, { relative: 1e-12 });
  });

  it("refuses bad input with a typed error naming the parameter", () => {
    expect(() => forecastBacklog({ ...input, seed: 1.5 })).toThrow(StatsInputError);
    expect(() => forecastBacklog({ ...input, simulations: 1 })).toThrow(/simulations/);
    expect(() => forecastBacklog({ ...input, tests: [] })).toThrow(/tests/);
    expect(() => forecastBacklog({ ...input, tests: [{ ...input.tests[0]!, standardError: 0 }] })).toThrow(
      /standardError/,
    );
    // 2 rules x (1 + 2 teams + 2 families) x 5 figures = 50 kept per quarter; 100 M / 50 = 2 M.
    expect(() => forecastBacklog({ ...input, simulations: 3_000_000 })).toThrow(
      /simulations must be at most 2000000 for 2 rule\(s\) over 2 team\(s\) and 2 metric family/,
    );
  });
});

describe("forecastBacklog: prior drawn from bootstrap refits, one per quarter (worked by hand)", () => {
  // Two refits of a family's prior: A puts every effect at 0, B at 0.02; s = 0.01, alpha 0.05,
  // so (as above) P(ship | A) = a = 1 - Phi(1.959964) = 0.025 and P(ship | B) = c = Phi(0.040036).
  // Each quarter draws A or B with probability 1/2 for BOTH planned tests, so
  //   E[shipped] = a + c, E[realized] = 0.02 c, and P(realized >= 0.04) = P(B, both ship) = c^2 / 2
  // (with independent priors per test it would be (c / 2)^2: the shared draw is what is tested).
  const point = (at: number): EffectPrior => ({
    family: "grid",
    components: [{ component: { kind: "point", at }, weight: 1 }],
  });
  const replicates = [point(0), point(0.02)];
  const criticalValue = criticalValueForAlpha(0.05);
  const a = normalSurvival(criticalValue);
  const c = normalCdf(2 - criticalValue);
  const simulations = 40_000;
  const tests = ["one", "two"].map((name) => ({
    name,
    team: "growth",
    family: "conversion",
    prior: point(0.01),
    priorReplicates: replicates,
    standardError: 0.01,
  }));
  const forecast = forecastBacklog({
    tests,
    rules: [{ label: "alpha=0.05", criticalValue }],
    simulations,
    seed: 11,
    target: 0.04,
  });
  const rule = forecast.rules[0]!;

  it("mixes the refits in the exact expectations and shares one refit per quarter", () => {
    const exact = { relative: 1e-9 };
    expectClose("expected shipped", {}, rule.shipped.expected!, a + c, exact);
    expectClose("expected realWins", {}, rule.realWins.expected!, c, exact);
    expectClose("expected realized", {}, rule.realizedLift.expected!, 0.02 * c, exact);
    // E[(y - theta) 1{ship}] = s^2 f(t): the average of the two point masses' normal densities at t.
    const threshold = criticalValue * 0.01;
    const density = (at: number) =>
      Math.exp(-0.5 * ((threshold - at) / 0.01) ** 2) / (0.01 * Math.sqrt(2 * Math.PI));
    expectClose(
      "expected gap",
      {},
      rule.liftGap.expected!,
      2 * 0.01 ** 2 * 0.5 * (density(0) + density(0.02)),
      exact,
    );
    expectWithinMonteCarlo("shipped", {}, rule.shipped, a + c);
    expectWithinMonteCarlo("realized", {}, rule.realizedLift, 0.02 * c);
    expectWithinMonteCarlo("gap", {}, rule.liftGap, rule.liftGap.expected!);
    const both = (c * c) / 2;
    expectClose("P(realized >= 0.04)", {}, rule.probabilityToReachTarget!.estimate, both, {
      absolute: monteCarloMultiple * Math.sqrt((both * (1 - both)) / simulations),
    });
    expect(forecast.cautions.join(" ")).toMatch(/bootstrap refits/);
    expect(forecast.assumptions.join(" ")).toMatch(
      /2 planned tests draw their prior from bootstrap refits \(2 per family\)/,
    );
  });

  it("leaves a forecast without refits as it was", () => {
    const fixed = forecastBacklog({
      tests: tests.map(({ priorReplicates: _, ...test }) => test),
      rules: [{ label: "alpha=0.05", criticalValue }],
      simulations: 500,
      seed: 11,
    });
    const nullReplicates = forecastBacklog({
      tests: tests.map((test) => ({ ...test, priorReplicates: null })),
      rules: [{ label: "alpha=0.05", criticalValue }],
      simulations: 500,
      seed: 11,
    });
    expect(nullReplicates).toEqual(fixed);
    expect(fixed.cautions.join(" ")).toMatch(/not carried into these ranges/);
  });
});
