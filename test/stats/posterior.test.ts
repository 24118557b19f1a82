import { describe, expect, it } from "vitest";
import type { EffectPrior, WeightedComponent } from "../../src/stats/effect-prior.ts";
import {
  posteriorColumns,
  posteriorMixture,
  posteriorOf,
  posteriorProbabilityAbove,
} from "../../src/stats/posterior.ts";
import { readFitFixture } from "./fit-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface PosteriorCase {
  readonly prior: WeightedComponent[];
  readonly y: number;
  readonly s: number;
  readonly level: number;
  readonly mean: number;
  readonly sd: number;
  readonly lower: number;
  readonly upper: number;
  readonly probPositive: number;
  readonly probNull: number;
  readonly probNegative: number;
}

// Reference: posteriors from their definition by scipy.integrate.quad (relative error ~1e-13),
// quantiles by brentq; fixture from test/fixtures/fit/generate-posterior.py.
const fixture = readFitFixture<{ cases: PosteriorCase[] }>("posterior");
// The quadrature reaches ~1e-12; the closed forms depend on the normal tail of distributions.ts,
// whose relative accuracy between 5 and 8 standard deviations is the limiting factor.
const momentTolerance = { relative: 1e-7, absolute: 1e-12 };
const quantileTolerance = { relative: 1e-7, absolute: 1e-12 };
const probabilityTolerance = { absolute: 1e-9 };

describe("posteriorOf against numerical integration", () => {
  for (const example of fixture.cases) {
    const kinds = [...new Set(example.prior.map((entry) => entry.component.kind))].join("+");
    it(`${kinds} prior, y = ${example.y}, s = ${example.s}, level ${example.level}`, () => {
      const prior: EffectPrior = { family: "assumed", components: example.prior };
      const result = posteriorOf(prior, example.y, example.s, example.level);
      const inputs = { prior: kinds, y: example.y, s: example.s, level: example.level };
      expectClose("posterior mean", inputs, result.mean, example.mean, momentTolerance);
      expectClose("posterior sd", inputs, result.sd, example.sd, momentTolerance);
      expectClose("lower credible bound", inputs, result.lower, example.lower, quantileTolerance);
      expectClose("upper credible bound", inputs, result.upper, example.upper, quantileTolerance);
      expectClose("P(theta > 0)", inputs, result.probPositive, example.probPositive, probabilityTolerance);
      expectClose("P(theta = 0)", inputs, result.probNull, example.probNull, probabilityTolerance);
      expectClose("P(theta < 0)", inputs, result.probNegative, example.probNegative, probabilityTolerance);
      // lfsr = min(P(theta >= 0), P(theta <= 0)) (Stephens 2017, section 2.5).
      const lfsr = Math.min(example.probPositive + example.probNull, example.probNegative + example.probNull);
      expectClose("lfsr", inputs, result.lfsr, lfsr, probabilityTolerance);
    });
  }

  it("posteriorColumns gives the same numbers as posteriorOf", () => {
    const example = fixture.cases[1] as PosteriorCase;
    const prior: EffectPrior = { family: "symmetric", components: example.prior };
    const ys = fixture.cases.slice(0, 6).map((entry) => entry.y);
    const ss = fixture.cases.slice(0, 6).map((entry) => entry.s);
    const columns = posteriorColumns(prior, ys, ss, 0.9);
    ys.forEach((y, i) => {
      const single = posteriorOf(prior, y, ss[i] as number, 0.9);
      expect(columns.mean[i]).toBe(single.mean);
      expect(columns.lower[i]).toBe(single.lower);
      expect(columns.lfsr[i]).toBe(single.lfsr);
    });
  });
});

describe("posteriorMixture", () => {
  it("is the normal-normal update for a normal prior (BDA3 section 2.5)", () => {
    // theta ~ N(0, 2^2), y = 3 with s = 1: posterior N(3 * 4/5, 4/5).
    const prior: EffectPrior = {
      family: "symmetric",
      components: [{ component: { kind: "normal", mean: 0, scale: 2 }, weight: 1 }],
    };
    const [only] = posteriorMixture(prior, 3, 1);
    expect(only?.component.kind).toBe("normal");
    if (only?.component.kind !== "normal") return;
    expectClose("posterior mean", { y: 3, s: 1, tau: 2 }, only.component.mean, 2.4, { relative: 1e-15 });
    expectClose("posterior scale", { y: 3, s: 1, tau: 2 }, only.component.scale, Math.sqrt(0.8), {
      relative: 1e-15,
    });
  });

  it("turns a uniform prior into the likelihood truncated to its support", () => {
    const prior: EffectPrior = {
      family: "skewed",
      components: [
        { component: { kind: "point", at: 0 }, weight: 0.5 },
        { component: { kind: "uniform", lower: 0, upper: 0.04 }, weight: 0.5 },
      ],
    };
    const mixture = posteriorMixture(prior, 0.01, 0.01);
    const truncated = mixture.find((entry) => entry.component.kind === "truncatedNormal");
    expect(truncated?.component).toEqual({
      kind: "truncatedNormal",
      mean: 0.01,
      scale: 0.01,
      lower: 0,
      upper: 0.04,
    });
    const total = mixture.reduce((sum, entry) => sum + entry.weight, 0);
    expectClose("weights sum", {}, total, 1, { absolute: 1e-15 });
  });
});

describe("posteriorProbabilityAbove", () => {
  it("at threshold 0 equals P(theta > 0) and falls as the threshold rises", () => {
    const example = fixture.cases[1] as PosteriorCase;
    const prior: EffectPrior = { family: "symmetric", components: example.prior };
    const atZero = posteriorProbabilityAbove(prior, example.y, example.s, 0);
    expectClose("P(theta > 0)", { y: example.y }, atZero, example.probPositive, probabilityTolerance);
    expect(posteriorProbabilityAbove(prior, example.y, example.s, 0.01)).toBeLessThan(atZero);
  });
});
