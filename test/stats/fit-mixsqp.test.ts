import { describe, expect, it } from "vitest";
import { fitEffectPrior } from "../../src/stats/fit-effect-prior.ts";
import { defaultScaleGrid } from "../../src/stats/prior-grid.ts";
import { readFitFixture } from "./fit-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface MixsqpFixture {
  readonly y: number[];
  readonly s: number[];
  readonly scales: number[];
  readonly weights: number[];
  readonly logLik: number;
  readonly maxD: number;
  readonly weightBelowMinSe: number;
  readonly minSe: number;
}

// Reference: R mixsqp 0.3 (Kim, Carbonetto, Stephens & Anitescu 2020, JCGS 29:945) on the issue-4
// recipe, fixture from test/fixtures/fit/generate.R.
const fixture = readFitFixture<MixsqpFixture>("mixsqp-symmetric");
const observations = fixture.y.map((y, i) => ({ y, s: fixture.s[i] as number }));
const inputs = { data: "mixsqp-symmetric.json", n: observations.length, family: "symmetric", nullWeight: 1 };

// Both optimizers reach max d_k <= 1 + 1e-8; the log-likelihood is then equal to far below 1e-6.
const logLikTolerance = { relative: 1e-6 };
// Single weights are barely identified (nearly collinear normals), their sum below min(s) is:
// the share of near-null effects. 0.01 absolute is about a fifth of its bootstrap sd here.
const nearNullTolerance = { absolute: 0.01 };
const gridTolerance = { relative: 1e-14 };

describe("fitEffectPrior against R mixsqp", () => {
  const fit = fitEffectPrior(observations, { family: "symmetric", nullWeight: 1 });

  it("builds the same default grid of scales", () => {
    const grid = defaultScaleGrid({ y: fixture.y, s: fixture.s });
    expect(grid.length + 1).toBe(fixture.scales.length);
    grid.forEach((scale, j) => {
      expectClose(`grid scale ${j}`, inputs, scale, fixture.scales[j + 1] as number, gridTolerance);
    });
  });

  it("reaches the optimality condition and mixsqp's log-likelihood", () => {
    expect(fit.converged, `optimalityGap ${fit.optimalityGap}`).toBe(true);
    expect(fit.optimalityGap).toBeLessThanOrEqual(1e-6);
    expectClose("logLik", inputs, fit.logLik, fixture.logLik, logLikTolerance);
    // The optimum is unique in L w, so neither solver can beat the other by more than rounding.
    expect(fit.logLik - fixture.logLik).toBeGreaterThan(-1e-6 * Math.abs(fixture.logLik));
  });

  it("puts the same total weight below min(s)", () => {
    let nearNull = 0;
    fit.grid.forEach((component, k) => {
      const scale = component.kind === "normal" ? component.scale : 0;
      if (scale < fixture.minSe) nearNull += fit.componentWeights[k] as number;
    });
    expectClose(
      "weight of components with scale < min(s)",
      inputs,
      nearNull,
      fixture.weightBelowMinSe,
      nearNullTolerance,
    );
  });

  it("reports weights on the simplex", () => {
    const total = fit.prior.components.reduce((sum, entry) => sum + entry.weight, 0);
    expectClose("sum of weights", inputs, total, 1, { absolute: 1e-12 });
  });
});
