/**
 * Simulation-based calibration of the fit (seeded): portfolios are drawn from known priors, fitted,
 * and the estimates compared with the truth of each portfolio (Talts et al. 2018, "Validating
 * Bayesian Inference Algorithms with Simulation-Based Calibration", arXiv:1804.06788, in spirit:
 * calibrated posteriors make expected and realized shares agree on average).
 *
 * Tolerance (stated once, used for every figure): with R replicate portfolios and per-replicate
 * differences d_r = estimate_r - truth_r, the mean difference must lie within 4 Monte Carlo
 * standard errors, |mean(d)| <= 4 sd(d) / sqrt(R), plus a floor of half a percentage point for
 * shares (the resolution that matters to a program); i.e. no bias beyond Monte Carlo noise.
 * The null share itself is barely identified (statistics.md, "Identification"): under the default
 * penalty it is checked one-sided (never below the truth beyond the tolerance). Where the penalty
 * can only make every figure conservative (no nulls at all, or real effects crowded near 0 as under the t prior), those checks are one-sided
 * too, and the same portfolios are also fitted without penalty, where every check is two-sided.
 * The mean squared error of the shrunk estimates must be below 0.8 times the raw one.
 */
import { describe, expect, it } from "vitest";
import { defaultNullWeight, type FitFamily, fitEffectPrior } from "../../src/stats/fit-effect-prior.ts";
import { posteriorColumns } from "../../src/stats/posterior.ts";
import { summarizePrior } from "../../src/stats/prior-summary.ts";
import { createRandom, type RandomSource } from "../../src/stats/random.ts";

const replicates = 12;
const resultsPerPortfolio = 1000;
const practicalThreshold = 0.005;
// Two-sided alpha 0.05: a win is y / s > 1.96 (statistics.md section 0, "Sides").
const significance = 1.959963984540054;
const standardErrors = 4;
const shareFloor = 0.005;

interface Scenario {
  readonly name: string;
  readonly family: FitFamily | "auto";
  /** Default 10 (the product default); 1 = the unpenalized maximum-likelihood fit. */
  readonly nullWeight: number;
  /**
   * calibrated: every figure unbiased. conservative: the null penalty may only err towards
   * nulls (null share, false share of wins and interval coverage not below the truth, win rate and
   * realization ratio not above it), the
   * documented effect of the penalty when there are no nulls at all (statistics.md, "Identification").
   */
  readonly expectation: "calibrated" | "conservative";
  readonly draw: (random: RandomSource) => number;
}

const noNulls = (r: RandomSource) => 0.015 * r.normal();
// Half nulls, half t with 3 df and scale 0.008: many real effects sit within a standard error of 0.
const fatTailed = (r: RandomSource) => {
  if (r.uniform() < 0.5) return 0;
  const chiSquare = r.normal() ** 2 + r.normal() ** 2 + r.normal() ** 2;
  return (0.008 * r.normal()) / Math.sqrt(chiSquare / 3);
};

const scenarios: Scenario[] = [
  {
    name: "mostly nulls + normal",
    family: "symmetric",
    nullWeight: defaultNullWeight,
    expectation: "calibrated",
    draw: (r) => (r.uniform() < 0.8 ? 0 : 0.02 * r.normal()),
  },
  {
    name: "skewed: losses outnumber wins",
    family: "auto",
    nullWeight: defaultNullWeight,
    expectation: "calibrated",
    draw: (r) => {
      const u = r.uniform();
      if (u < 0.6) return 0;
      return u < 0.75 ? 0.03 * r.uniform() : -0.04 * r.uniform();
    },
  },
  {
    name: "fat-tailed t (3 df), unpenalized",
    family: "symmetric",
    nullWeight: 1,
    expectation: "calibrated",
    draw: fatTailed,
  },
  {
    name: "fat-tailed t (3 df), default penalty",
    family: "symmetric",
    nullWeight: defaultNullWeight,
    expectation: "conservative",
    draw: fatTailed,
  },
  {
    name: "no nulls, unpenalized",
    family: "symmetric",
    nullWeight: 1,
    expectation: "calibrated",
    draw: noNulls,
  },
  {
    name: "no nulls, default penalty",
    family: "symmetric",
    nullWeight: defaultNullWeight,
    expectation: "conservative",
    draw: noNulls,
  },
];

interface ReplicateFigures {
  nullShare: [number, number];
  winRate: [number, number];
  falseWinShare: [number, number];
  significantCoverage: [number, number];
  realizationRatio: [number, number];
  overallCoverage: number;
  shrunkMse: number;
  rawMse: number;
}

function runReplicate(scenario: Scenario, seed: number): ReplicateFigures {
  const random = createRandom(seed);
  const theta: number[] = [];
  const y: number[] = [];
  const s: number[] = [];
  for (let i = 0; i < resultsPerPortfolio; i++) {
    const se = 0.005 + 0.025 * random.uniform();
    const effect = scenario.draw(random);
    theta.push(effect);
    s.push(se);
    y.push(effect + se * random.normal());
  }
  const fit = fitEffectPrior(
    y.map((value, i) => ({ y: value, s: s[i] as number })),
    { family: scenario.family, nullWeight: scenario.nullWeight },
  );
  const summary = summarizePrior(fit.prior, { threshold: practicalThreshold });
  const posterior = posteriorColumns(fit.prior, y, s, 0.9);
  let significant = 0;
  let expectedFalse = 0;
  let realizedFalse = 0;
  let covered = 0;
  let coveredAll = 0;
  let claimed = 0;
  let shrunk = 0;
  let realized = 0;
  let shrunkError = 0;
  let rawError = 0;
  for (let i = 0; i < resultsPerPortfolio; i++) {
    const effect = theta[i] as number;
    const inside = (posterior.lower[i] as number) <= effect && effect <= (posterior.upper[i] as number);
    if (inside) coveredAll++;
    shrunkError += ((posterior.mean[i] as number) - effect) ** 2;
    rawError += ((y[i] as number) - effect) ** 2;
    if ((y[i] as number) / (s[i] as number) <= significance) continue;
    significant++;
    expectedFalse += 1 - (posterior.probPositive[i] as number);
    if (effect <= 0) realizedFalse++;
    if (inside) covered++;
    claimed += y[i] as number;
    shrunk += posterior.mean[i] as number;
    realized += effect;
  }
  const trueNulls = theta.filter((effect) => effect === 0).length / resultsPerPortfolio;
  const trueWins = theta.filter((effect) => effect > practicalThreshold).length / resultsPerPortfolio;
  return {
    nullShare: [summary.nullShare, trueNulls],
    winRate: [summary.winRate, trueWins],
    falseWinShare: [expectedFalse / significant, realizedFalse / significant],
    significantCoverage: [covered / significant, 0.9],
    realizationRatio: [shrunk / claimed, realized / claimed],
    overallCoverage: coveredAll / resultsPerPortfolio,
    shrunkMse: shrunkError / resultsPerPortfolio,
    rawMse: rawError / resultsPerPortfolio,
  };
}

/** direction 0: unbiased; +1: may err upwards only; -1: may err downwards only. */
function expectCalibrated(
  figure: string,
  scenario: string,
  pairs: readonly [number, number][],
  floor: number,
  direction: -1 | 0 | 1 = 0,
): void {
  const differences = pairs.map(([estimate, truth]) => estimate - truth);
  const mean = differences.reduce((sum, value) => sum + value, 0) / differences.length;
  const sd = Math.sqrt(
    differences.reduce((sum, value) => sum + (value - mean) ** 2, 0) / (differences.length - 1),
  );
  const tolerance = Math.max(floor, (standardErrors * sd) / Math.sqrt(differences.length));
  const estimates = pairs.map(([estimate]) => estimate.toFixed(4)).join(" ");
  const truths = pairs.map(([, truth]) => truth.toFixed(4)).join(" ");
  const excess = direction === 0 ? Math.abs(mean) : direction > 0 ? -mean : mean;
  const expected = direction === 0 ? "0" : direction > 0 ? ">= 0" : "<= 0";
  expect(
    excess,
    `${figure} (${scenario}): inputs R=${pairs.length}, N=${resultsPerPortfolio}; actual mean difference ${mean} (estimates ${estimates}; truths ${truths}); expected ${expected}; tolerance ${tolerance} (${standardErrors} MC standard errors, floor ${floor})`,
  ).toBeLessThanOrEqual(tolerance);
}

describe("simulation-based calibration of the fit", () => {
  scenarios.forEach((scenario, index) => {
    it(`${scenario.name}: shares, coverage and realization agree with the truth`, () => {
      const figures = Array.from({ length: replicates }, (_, r) =>
        runReplicate(scenario, 1000 * (index + 1) + r),
      );
      const upward = scenario.expectation === "conservative" ? 1 : 0;
      const downward = scenario.expectation === "conservative" ? -1 : 0;
      // The null share is set by the penalty, not the data (statistics.md, "Identification"):
      // with the default penalty it may only err upwards; unpenalized it must be unbiased.
      expectCalibrated(
        "null share",
        scenario.name,
        figures.map((entry) => entry.nullShare),
        shareFloor,
        scenario.nullWeight > 1 ? 1 : 0,
      );
      expectCalibrated(
        "win rate P(theta > 0.005)",
        scenario.name,
        figures.map((entry) => entry.winRate),
        shareFloor,
        downward,
      );
      expectCalibrated(
        "false share of significant wins",
        scenario.name,
        figures.map((entry) => entry.falseWinShare),
        shareFloor,
        upward,
      );
      expectCalibrated(
        "90 % coverage of significant wins",
        scenario.name,
        figures.map((entry) => entry.significantCoverage),
        shareFloor,
        upward,
      );
      expectCalibrated(
        "realization ratio",
        scenario.name,
        figures.map((entry) => entry.realizationRatio),
        0.01,
        downward,
      );
      const shrunkMse = figures.reduce((sum, entry) => sum + entry.shrunkMse, 0);
      const rawMse = figures.reduce((sum, entry) => sum + entry.rawMse, 0);
      expect(shrunkMse / rawMse, `MSE ratio shrunk/raw (${scenario.name})`).toBeLessThan(0.8);
      const overall = figures.reduce((sum, entry) => sum + entry.overallCoverage, 0) / figures.length;
      // Reported, not asserted: overall coverage depends on the barely identified null split.
      console.info(
        `${scenario.name}: overall 90 % coverage ${overall.toFixed(3)}, MSE ratio ${(shrunkMse / rawMse).toFixed(3)}`,
      );
    });
  });
});
