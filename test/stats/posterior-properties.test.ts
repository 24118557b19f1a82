/** Property tests (fast-check) of the fit and the posteriors: common practice for numerical code. */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import type { EffectPrior } from "../../src/stats/effect-prior.ts";
import { fitEffectPrior } from "../../src/stats/fit-effect-prior.ts";
import { posteriorOf, posteriorProbabilityAbove } from "../../src/stats/posterior.ts";

const scale = fc.double({ min: 0.001, max: 0.1, noNaN: true });
const weight = fc.double({ min: 0.01, max: 1, noNaN: true });
const estimate = fc.double({ min: -0.5, max: 0.5, noNaN: true });
const standardError = fc.double({ min: 0.001, max: 0.05, noNaN: true });

const symmetricPrior = fc
  .tuple(weight, fc.array(fc.tuple(scale, weight), { minLength: 1, maxLength: 4 }))
  .map(([nullWeight, normals]): EffectPrior => {
    const total = nullWeight + normals.reduce((sum, [, w]) => sum + w, 0);
    return {
      family: "symmetric",
      components: [
        { component: { kind: "point", at: 0 }, weight: nullWeight / total },
        ...normals.map(([sigma, w]) => ({
          component: { kind: "normal", mean: 0, scale: sigma } as const,
          weight: w / total,
        })),
      ],
    };
  });

const skewedPrior = fc
  .tuple(weight, fc.array(fc.tuple(scale, weight, fc.boolean()), { minLength: 1, maxLength: 4 }))
  .map(([nullWeight, uniforms]): EffectPrior => {
    const total = nullWeight + uniforms.reduce((sum, [, w]) => sum + w, 0);
    return {
      family: "skewed",
      components: [
        { component: { kind: "point", at: 0 }, weight: nullWeight / total },
        ...uniforms.map(([bound, w, positive]) => ({
          component: { kind: "uniform", lower: positive ? 0 : -bound, upper: positive ? bound : 0 } as const,
          weight: w / total,
        })),
      ],
    };
  });

/** The prior of -theta. */
function mirrored(prior: EffectPrior): EffectPrior {
  return {
    family: prior.family,
    components: prior.components.map(({ component, weight }) => {
      if (component.kind === "point") return { component: { kind: "point", at: -component.at }, weight };
      if (component.kind === "uniform")
        return { component: { kind: "uniform", lower: -component.upper, upper: -component.lower }, weight };
      if (component.kind === "normal") return { component: { ...component, mean: -component.mean }, weight };
      throw new Error(`mirrored: ${component.kind} is not used here`);
    }),
  };
}

describe("posterior properties", () => {
  it("under a symmetric prior the posterior mean lies between 0 and y", () => {
    fc.assert(
      fc.property(symmetricPrior, estimate, standardError, (prior, y, s) => {
        const { mean } = posteriorOf(prior, y, s);
        const slack = 1e-12 * Math.abs(y);
        return Math.min(0, y) - slack <= mean && mean <= Math.max(0, y) + slack;
      }),
    );
  });

  it("probabilities lie in [0, 1], sum to 1, and the interval holds the mean", () => {
    fc.assert(
      fc.property(fc.oneof(symmetricPrior, skewedPrior), estimate, standardError, (prior, y, s) => {
        const result = posteriorOf(prior, y, s);
        for (const p of [result.probPositive, result.probNull, result.probNegative, result.lfsr])
          if (!(p >= 0 && p <= 1)) return false;
        const total = result.probPositive + result.probNull + result.probNegative;
        return (
          Math.abs(total - 1) < 1e-9 &&
          result.lower <= result.upper &&
          result.sd >= 0 &&
          result.lfsr <= 0.5 + result.probNull
        );
      }),
    );
  });

  it("the credible bounds invert the posterior cdf, also where a uniform's bound is near them", () => {
    // The quantile search against bisection on P(theta > t) (posteriorProbabilityAbove, which
    // does not search): F(lower) = (1 - level)/2 and F(upper) = (1 + level)/2 to 1e-9 of the
    // posterior sd, wherever the posterior has density at the bound (an atom's jump returns the atom).
    const level = fc.constantFrom(0.5, 0.8, 0.9, 0.95);
    fc.assert(
      fc.property(
        fc.oneof(symmetricPrior, skewedPrior),
        estimate,
        standardError,
        level,
        (prior, y, s, lvl) => {
          const result = posteriorOf(prior, y, s, lvl);
          for (const [bound, p] of [
            [result.lower, (1 - lvl) / 2],
            [result.upper, (1 + lvl) / 2],
          ] as const) {
            if (bound === 0) continue;
            // F(t) = 1 - P(theta > t) for t > 0; for t < 0, P(theta < t) = P(-theta > -t), the
            // upper tail under the mirrored prior and -y (posteriorProbabilityAbove takes t >= 0).
            const cdf = (at: number): number =>
              at > 0
                ? 1 - posteriorProbabilityAbove(prior, y, s, at)
                : posteriorProbabilityAbove(mirrored(prior), -y, s, -at);
            // Bisect on the bound's side of 0 (the atom at 0 is a jump).
            let low = bound < 0 ? bound - 10 * result.sd - 1 : 0;
            let high = bound < 0 ? 0 : bound + 10 * result.sd + 1;
            for (let step = 0; step < 200; step++) {
              const middle = 0.5 * (low + high);
              if (cdf(middle) >= p) high = middle;
              else low = middle;
            }
            if (!(Math.abs(high - bound) <= 1e-9 * result.sd + 1e-15)) return false;
          }
          return true;
        },
      ),
      { numRuns: 300 },
    );
  });

  it("does not mutate the prior", () => {
    fc.assert(
      fc.property(skewedPrior, estimate, standardError, (prior, y, s) => {
        const copy = JSON.stringify(prior);
        posteriorOf(prior, y, s);
        return JSON.stringify(prior) === copy;
      }),
    );
  });
});

describe("fit properties", () => {
  const observations = fc.array(fc.record({ y: estimate, s: standardError }), {
    minLength: 3,
    maxLength: 60,
  });
  const family = fc.constantFrom("symmetric" as const, "skewed" as const, "grid" as const);

  it("weights sum to 1, the fit converges, and refitting the same data gives the same answer", () => {
    fc.assert(
      fc.property(observations, family, fc.constantFrom(1, 10), (data, chosen, nullWeight) => {
        const first = fitEffectPrior(data, { family: chosen, nullWeight });
        const second = fitEffectPrior(data, { family: chosen, nullWeight });
        const total = first.prior.components.reduce((sum, entry) => sum + entry.weight, 0);
        expect(Math.abs(total - 1)).toBeLessThan(1e-12);
        expect(first.prior.components.every((entry) => entry.weight >= 0)).toBe(true);
        expect(
          first.optimalityGap,
          JSON.stringify({ chosen, nullWeight, gap: first.optimalityGap }),
        ).toBeLessThanOrEqual(1e-6);
        expect(second).toEqual(first);
      }),
      { numRuns: 100 },
    );
  });
});
