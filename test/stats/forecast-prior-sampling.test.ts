/**
 * Draws from EffectPrior components against their distribution functions. The Student t and normal cdfs
 * comes from jstat (through src/stats/distributions.ts); Gamma(a, 1) has mean a and variance a
 * (textbook). Tolerance: an empirical cdf value differs from the exact one by at most 4 binomial
 * standard errors sqrt(F (1 - F) / R); a sample mean by at most 4 sd / sqrt(R).
 */
import { describe, expect, it } from "vitest";
import { normalCdf, studentTCdf } from "../../src/stats/distributions.ts";
import type { EffectPrior, PriorComponent } from "../../src/stats/effect-prior.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { createPriorSampler, gammaSampler, samplePrior } from "../../src/stats/prior-sampling.ts";
import { createRandom } from "../../src/stats/random.ts";
import { expectClose } from "./tolerance.ts";

const draws = 100_000;
const only = (component: PriorComponent): EffectPrior => ({
  family: "assumed",
  components: [{ component, weight: 1 }],
});

function sample(prior: EffectPrior, seed: number): Float64Array {
  const sampler = createPriorSampler(prior);
  const random = createRandom(seed);
  return Float64Array.from({ length: draws }, () => sampler(random));
}

function expectCdf(values: Float64Array, at: number, exact: number, label: string) {
  let count = 0;
  for (const value of values) if (value <= at) count++;
  const tolerance = 4 * Math.sqrt((exact * (1 - exact)) / values.length);
  expectClose(`${label} cdf`, { at }, count / values.length, exact, { absolute: tolerance });
}

describe("createPriorSampler", () => {
  it("draws half-t sizes with the t distribution (whole df: squared normals)", () => {
    const values = sample(only({ kind: "halfT", sign: 1, scale: 0.01, df: 3 }), 1);
    expect(Math.min(...values)).toBeGreaterThanOrEqual(0);
    // |T| scale: P(|T| scale <= x) = 2 F_t(x / scale) - 1.
    for (const x of [0.002, 0.01, 0.03, 0.08])
      expectCdf(values, x, 2 * studentTCdf(x / 0.01, 3) - 1, "half-t 3");
  });

  it("draws half-t sizes for fractional df through the gamma sampler, on the loss side", () => {
    const values = sample(only({ kind: "halfT", sign: -1, scale: 2, df: 2.5 }), 2);
    expect(Math.max(...values)).toBeLessThanOrEqual(0);
    for (const x of [-10, -3, -1, -0.2]) expectCdf(values, x, 2 - 2 * studentTCdf(-x / 2, 2.5), "half-t 2.5");
  });

  it("draws normal, uniform, half-normal and point components", () => {
    const normal = sample(only({ kind: "normal", mean: 0.01, scale: 0.02 }), 3);
    for (const x of [-0.02, 0.01, 0.04]) expectCdf(normal, x, normalCdf((x - 0.01) / 0.02), "normal");
    const uniform = sample(only({ kind: "uniform", lower: -0.02, upper: 0.06 }), 4);
    for (const x of [-0.01, 0.02, 0.05]) expectCdf(uniform, x, (x + 0.02) / 0.08, "uniform");
    const halfNormal = sample(only({ kind: "halfNormal", sign: 1, scale: 0.5 }), 5);
    for (const x of [0.1, 0.5, 1]) expectCdf(halfNormal, x, 2 * normalCdf(x / 0.5) - 1, "half-normal");
    expect(samplePrior(only({ kind: "point", at: 0.3 }), createRandom(1))).toBe(0.3);
  });

  it("draws truncated normals inside their window, also far in a tail", () => {
    const values = sample(only({ kind: "truncatedNormal", mean: 0, scale: 1, lower: -0.5, upper: 2 }), 8);
    const mass = normalCdf(2) - normalCdf(-0.5);
    for (const x of [-0.2, 0.5, 1.5])
      expectCdf(values, x, (normalCdf(x) - normalCdf(-0.5)) / mass, "truncated");
    const tail = sample(only({ kind: "truncatedNormal", mean: 0, scale: 1, lower: 9, upper: Infinity }), 9);
    expect(Math.min(...tail)).toBeGreaterThanOrEqual(9);
    expect(Math.max(...tail)).toBeLessThan(11);
  });

  it("picks components in proportion to their weights, for short and long mixtures", () => {
    const short: EffectPrior = {
      family: "skewed",
      components: [
        { component: { kind: "point", at: 0 }, weight: 0.6 },
        { component: { kind: "uniform", lower: 0, upper: 1 }, weight: 0.4 },
      ],
    };
    const values = sample(short, 6);
    expectCdf(values, 0, 0.6, "mixture null share");
    // A 40-point grid (binary-search path): theta = k / 40 with weight 1/40 each.
    const grid: EffectPrior = {
      family: "grid",
      components: Array.from({ length: 40 }, (_, k) => ({
        component: { kind: "point", at: k / 40 },
        weight: 1 / 40,
      })),
    };
    const gridValues = sample(grid, 7);
    for (const k of [0, 9, 25, 38]) expectCdf(gridValues, k / 40, (k + 1) / 40, "grid");
  });

  it("refuses malformed priors", () => {
    expect(() => createPriorSampler({ family: "grid", components: [] })).toThrow(StatsInputError);
    expect(() => createPriorSampler(only({ kind: "halfT", sign: 1, scale: 1, df: 0 }))).toThrow(/df/);
    expect(() =>
      createPriorSampler({
        family: "grid",
        components: [{ component: { kind: "point", at: 0 }, weight: -1 }],
      }),
    ).toThrow(/weight/);
  });
});

describe("gammaSampler (Marsaglia & Tsang 2000)", () => {
  for (const shape of [0.4, 1.25, 7]) {
    it(`has mean and variance ${shape} for shape ${shape}`, () => {
      const gamma = gammaSampler(shape);
      const random = createRandom(11);
      const values = Float64Array.from({ length: draws }, () => gamma(random));
      const mean = values.reduce((sum, value) => sum + value, 0) / draws;
      const variance = values.reduce((sum, value) => sum + (value - mean) ** 2, 0) / (draws - 1);
      expectClose("gamma mean", { shape }, mean, shape, { absolute: 4 * Math.sqrt(shape / draws) });
      // Var of the sample variance of a gamma: (mu4 - sigma^4) / R with mu4 = 3a^2 + 6a.
      expectClose("gamma variance", { shape }, variance, shape, {
        absolute: 4 * Math.sqrt((3 * shape * shape + 6 * shape - shape * shape) / draws),
      });
    });
  }
});
