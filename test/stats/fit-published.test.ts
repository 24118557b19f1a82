import { describe, expect, it } from "vitest";
import { componentLogLikelihood } from "../../src/stats/component-likelihood.ts";
import { fitEffectPrior } from "../../src/stats/fit-effect-prior.ts";
import { posteriorOf } from "../../src/stats/posterior.ts";
import { summarizePrior } from "../../src/stats/prior-summary.ts";
import { readFitFixture } from "./fit-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface EfronMorrisFixture {
  readonly atBats: number;
  readonly average: number[];
  readonly restOfSeason: number[];
}

interface EightSchoolsFixture {
  readonly y: number[];
  readonly s: number[];
  readonly remlEstimate: number;
  readonly remlSe: number;
  readonly remlTau2: number;
  readonly commonEstimate: number;
  readonly commonLogLik: number;
}

const sumOfSquares = (estimates: readonly number[], truth: readonly number[]) =>
  estimates.reduce((sum, value, i) => sum + (value - (truth[i] as number)) ** 2, 0);

describe("Efron & Morris (1975) batting averages", () => {
  // Data: pscl::EfronMorris (Efron & Morris 1975, JASA 70:311, Table 1), fixture from generate.R.
  const fixture = readFitFixture<EfronMorrisFixture>("efron-morris");
  const averages = fixture.average;
  const truth = fixture.restOfSeason;
  const count = averages.length;
  const grandMean = averages.reduce((sum, value) => sum + value, 0) / count;
  // Binomial sampling variance of a 45-at-bat average at the grand mean (Efron & Morris 1975, section 1).
  const samplingVariance = (grandMean * (1 - grandMean)) / fixture.atBats;
  const spread = averages.reduce((sum, value) => sum + (value - grandMean) ** 2, 0);
  const shrinkage = 1 - ((count - 3) * samplingVariance) / spread;
  const jamesStein = averages.map((value) => grandMean + shrinkage * (value - grandMean));
  const rawError = sumOfSquares(averages, truth);
  const inputs = { data: "efron-morris.json", count, grandMean, samplingVariance };

  it("reproduces the published James-Stein shrinkage factor 0.212", () => {
    // Efron & Morris 1975 (and Efron & Morris 1977, Sci. Am. 236:119): c = 0.212, printed to 3 decimals.
    expectClose("James-Stein shrinkage factor", inputs, shrinkage, 0.212, { absolute: 0.0005 });
  });

  it("reproduces the published ~3.5x smaller squared error of James-Stein", () => {
    // Published: total squared error 0.077 raw vs 0.022 James-Stein, "3.5 times" (rounded to 1 decimal).
    expectClose(
      "squared-error ratio raw / James-Stein",
      inputs,
      rawError / sumOfSquares(jamesStein, truth),
      3.5,
      {
        absolute: 0.05,
      },
    );
  });

  it("plumbline's empirical-Bayes estimates also beat the raw averages", () => {
    // Deviations from the grand mean, symmetric family (shrinkage towards the mean), no null penalty.
    const observations = averages.map((value) => ({ y: value - grandMean, s: Math.sqrt(samplingVariance) }));
    for (const family of ["symmetric", "skewed", "grid"] as const) {
      const fit = fitEffectPrior(observations, { family, nullWeight: 1 });
      const shrunk = observations.map(
        (observation) => grandMean + posteriorOf(fit.prior, observation.y, observation.s).mean,
      );
      const shrunkError = sumOfSquares(shrunk, truth);
      expect(shrunkError, `${family}: shrunk ${shrunkError} vs raw ${rawError}`).toBeLessThan(rawError / 2);
    }
  });
});

describe("The eight schools (Rubin 1981; BDA3 section 5.5)", () => {
  // Reference: metafor::rma (REML) pooled 7.69, SE 4.07, tau^2 = 0; fixture from generate.R.
  const fixture = readFitFixture<EightSchoolsFixture>("eight-schools");
  const observations = fixture.y.map((y, i) => ({ y, s: fixture.s[i] as number }));
  const inputs = { data: "eight-schools.json", family: "grid", nullWeight: 1 };
  const fit = fitEffectPrior(observations, { family: "grid", nullWeight: 1 });
  const summary = summarizePrior(fit.prior);
  // The grid family has 300 atoms on [min y, max y] = [-3, 28]: the optimum can be missed by half a step.
  const gridStep = (28 - -3) / 299;

  it("matches the published values from metafor", () => {
    expectClose("REML pooled estimate (BDA3: 7.7)", inputs, fixture.remlEstimate, 7.69, { absolute: 0.005 });
    expectClose("REML SE (BDA3: 4.1)", inputs, fixture.remlSe, 4.07, { absolute: 0.005 });
    expect(fixture.remlTau2).toBe(0);
  });

  it("the nonparametric MLE is a single atom at the pooled estimate (between-school variance 0)", () => {
    expect(fit.converged).toBe(true);
    expectClose("prior mean", inputs, summary.mean, fixture.remlEstimate, { absolute: gridStep / 2 });
    expectClose("prior sd (tau)", inputs, summary.sd, 0, { absolute: gridStep / 2 });
  });

  it("reaches the common-effect maximum log-likelihood up to the grid step", () => {
    // Missing the optimum by at most gridStep/2 costs at most 0.5 (gridStep/2)^2 / SE^2 = 5.4e-4.
    const gridLoss = (0.5 * (gridStep / 2) ** 2) / fixture.remlSe ** 2;
    expectClose("logLik", inputs, fit.logLik, fixture.commonLogLik, { absolute: gridLoss });
  });

  it("plumbline's marginal likelihood has the curvature of SE 4.07 at the pooled estimate", () => {
    const logLikAt = (location: number) =>
      observations.reduce(
        (sum, { y, s }) => sum + componentLogLikelihood({ kind: "point", at: location }, y, s),
        0,
      );
    const step = 1e-3;
    const center = fixture.remlEstimate;
    const curvature = -(logLikAt(center + step) - 2 * logLikAt(center) + logLikAt(center - step)) / step ** 2;
    expectClose("SE from curvature", inputs, 1 / Math.sqrt(curvature), fixture.remlSe, { relative: 1e-6 });
  });
});
