import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import type { EffectPrior, PriorComponent } from "../../src/stats/effect-prior.ts";
import {
  bivariateNormalUpperProbability,
  integrateAdaptive,
  studentTDensity,
  studentTDensityFunction,
} from "../../src/stats/prior-quadrature.ts";
import { createRandom, type RandomSource } from "../../src/stats/random.ts";
import {
  componentPartial,
  expectedShippedEffect,
  expectedShippedEstimate,
  expectedShippedLoss,
  predictiveDensity,
  probabilityOfFalseShipping,
  probabilityOfShipping,
  probabilityOfShippingAbove,
} from "../../src/stats/shipping-expectation.ts";
import { expectClose } from "./tolerance.ts";

interface ShippingCase {
  component: PriorComponent;
  standardError: number;
  threshold: number;
  lower: number;
  upper: number;
  probability: number;
  effectMoment: number;
}
interface BivariateCase {
  h: number;
  k: number;
  rho: number;
  probability: number;
}

const fixture = JSON.parse(
  readFileSync(
    fileURLToPath(new URL("../fixtures/defaults/shipping-expectation.json", import.meta.url)),
    "utf8",
  ),
  (_key, value) => (value === "Infinity" ? Infinity : value === "-Infinity" ? -Infinity : value),
) as { shipping: ShippingCase[]; bivariateNormal: BivariateCase[] };

// Tolerances against scipy quadrature (itself good to about 1e-13 relative).
const probabilityTolerance = { absolute: 1e-12, relative: 1e-9 };
const momentTolerance = { absolute: 1e-14, relative: 1e-9 };
const bivariateTolerance = { absolute: 1e-14, relative: 1e-10 };

describe("shipping expectations against scipy quadrature (test/fixtures/defaults/generate.py)", () => {
  it.each(fixture.shipping)("$component.kind s=$standardError t=$threshold ($lower, $upper]", (row) => {
    const actual = componentPartial(row.component, row.standardError, row.threshold, row.lower, row.upper);
    expectClose("probability", row, actual.probability, row.probability, probabilityTolerance);
    expectClose("effectMoment", row, actual.effectMoment, row.effectMoment, momentTolerance);
  });
});

describe("bivariate normal upper orthant (Genz 2004) against scipy quadrature", () => {
  it.each(fixture.bivariateNormal)("h=$h k=$k rho=$rho", (row) => {
    expectClose(
      "bivariateNormalUpperProbability",
      row,
      bivariateNormalUpperProbability(row.h, row.k, row.rho),
      row.probability,
      bivariateTolerance,
    );
  });
  it("matches Sheppard's orthant formula 1/4 + asin(rho)/(2 pi) at h = k = 0", () => {
    // Sheppard (1899): P(X > 0, Y > 0) = 1/4 + asin(rho) / (2 pi).
    for (const rho of [-0.97, -0.5, 0, 0.4, 0.93, 0.9999]) {
      expectClose(
        "orthant",
        { rho },
        bivariateNormalUpperProbability(0, 0, rho),
        0.25 + Math.asin(rho) / (2 * Math.PI),
        {
          absolute: 1e-15,
        },
      );
    }
  });
});

function drawEffect(component: PriorComponent, random: RandomSource): number {
  switch (component.kind) {
    case "point":
      return component.at;
    case "normal":
      return component.mean + component.scale * random.normal();
    case "uniform":
      return component.lower + (component.upper - component.lower) * random.uniform();
    case "halfNormal":
      return component.sign * component.scale * Math.abs(random.normal());
    case "halfT": {
      let chiSquare = 0;
      for (let i = 0; i < component.df; i++) chiSquare += random.normal() ** 2;
      return (
        component.sign * component.scale * Math.abs(random.normal() / Math.sqrt(chiSquare / component.df))
      );
    }
    case "truncatedNormal":
      for (;;) {
        const theta = component.mean + component.scale * random.normal();
        if (theta >= component.lower && theta <= component.upper) return theta;
      }
  }
}

describe("shipping expectations against a seeded Monte Carlo", () => {
  const prior: EffectPrior = {
    family: "assumed",
    components: [
      { component: { kind: "point", at: 0 }, weight: 0.55 },
      { component: { kind: "halfT", sign: 1, scale: 0.01, df: 3 }, weight: 0.2 },
      { component: { kind: "halfNormal", sign: -1, scale: 0.01 }, weight: 0.1 },
      { component: { kind: "normal", mean: 0.002, scale: 0.004 }, weight: 0.1 },
      { component: { kind: "uniform", lower: -0.01, upper: 0.02 }, weight: 0.05 },
    ],
  };
  const standardError = 0.006;
  const threshold = 1.6 * standardError;
  it("agrees within 4 Monte Carlo standard errors (200,000 draws, seed 20240601)", () => {
    const random = createRandom(20240601);
    const draws = 200_000;
    const cumulative: number[] = [];
    let total = 0;
    for (const { weight } of prior.components) {
      total += weight;
      cumulative.push(total);
    }
    const sums = {
      ship: [0, 0],
      effect: [0, 0],
      above: [0, 0],
      falseWin: [0, 0],
      loss: [0, 0],
      estimate: [0, 0],
    };
    const add = (key: keyof typeof sums, value: number) => {
      sums[key][0]! += value;
      sums[key][1]! += value * value;
    };
    for (let i = 0; i < draws; i++) {
      const u = random.uniform();
      const index = cumulative.findIndex((edge) => u < edge);
      const theta = drawEffect(
        prior.components[index === -1 ? prior.components.length - 1 : index]!.component,
        random,
      );
      const estimate = theta + standardError * random.normal();
      const ships = estimate > threshold ? 1 : 0;
      add("estimate", estimate * ships);
      add("ship", ships);
      add("effect", theta * ships);
      add("above", theta > 0.005 ? ships : 0);
      add("falseWin", theta <= 0.005 ? ships : 0);
      add("loss", theta < 0 ? theta * ships : 0);
    }
    const expected = {
      ship: probabilityOfShipping(prior, standardError, threshold),
      effect: expectedShippedEffect(prior, standardError, threshold),
      above: probabilityOfShippingAbove(prior, standardError, threshold, 0.005),
      falseWin: probabilityOfFalseShipping(prior, standardError, threshold, 0.005),
      loss: expectedShippedLoss(prior, standardError, threshold),
      estimate: expectedShippedEstimate(prior, standardError, threshold),
    };
    for (const key of Object.keys(sums) as (keyof typeof sums)[]) {
      const mean = sums[key][0]! / draws;
      const monteCarloError = Math.sqrt((sums[key][1]! / draws - mean * mean) / draws);
      expectClose(`Monte Carlo ${key}`, { standardError, threshold }, mean, expected[key], {
        absolute: 4 * monteCarloError,
      });
    }
  });
});

describe("prior predictive density", () => {
  it("integrates to 1 over y for every component kind (adaptive quadrature)", () => {
    const components: PriorComponent[] = [
      { kind: "point", at: 0.01 },
      { kind: "normal", mean: -0.01, scale: 0.02 },
      { kind: "uniform", lower: -0.02, upper: 0.04 },
      { kind: "halfNormal", sign: -1, scale: 0.02 },
      { kind: "halfT", sign: 1, scale: 0.01, df: 3 },
      { kind: "truncatedNormal", mean: 0.01, scale: 0.01, lower: 0, upper: 0.02 },
    ];
    for (const component of components) {
      const prior: EffectPrior = { family: "assumed", components: [{ component, weight: 1 }] };
      const total = integrateAdaptive((y) => predictiveDensity(prior, 0.005, y), -Infinity, Infinity, {
        tailScale: 0.02,
      });
      expectClose("integral of predictive density", component, total, 1, { absolute: 1e-8 });
    }
  });
});

describe("properties", () => {
  const component = fc.oneof(
    fc.record({ kind: fc.constant("point" as const), at: fc.double({ min: -0.1, max: 0.1, noNaN: true }) }),
    fc.record({
      kind: fc.constant("normal" as const),
      mean: fc.double({ min: -0.05, max: 0.05, noNaN: true }),
      scale: fc.double({ min: 1e-4, max: 0.1, noNaN: true }),
    }),
    fc.record({
      kind: fc.constant("halfT" as const),
      sign: fc.constantFrom(1 as const, -1 as const),
      scale: fc.double({ min: 1e-3, max: 0.05, noNaN: true }),
      df: fc.constantFrom(2, 3, 5),
    }),
  );
  it("P(ship) is in [0, 1], real + false wins add up to it, and it falls as the threshold rises", () => {
    fc.assert(
      fc.property(
        component,
        fc.double({ min: 1e-4, max: 0.05, noNaN: true }),
        fc.double({ min: -0.05, max: 0.1, noNaN: true }),
        fc.double({ min: -0.02, max: 0.02, noNaN: true }),
        (c, s, t, delta) => {
          const prior: EffectPrior = { family: "assumed", components: [{ component: c, weight: 1 }] };
          const ship = probabilityOfShipping(prior, s, t);
          expect(ship).toBeGreaterThanOrEqual(0);
          expect(ship).toBeLessThanOrEqual(1 + 1e-12);
          const split =
            probabilityOfShippingAbove(prior, s, t, delta) + probabilityOfFalseShipping(prior, s, t, delta);
          expect(Math.abs(split - ship)).toBeLessThan(1e-10);
          expect(probabilityOfShipping(prior, s, t + s)).toBeLessThanOrEqual(ship + 1e-12);
        },
      ),
      { numRuns: 200, seed: 7 },
    );
  });
  it("returns NaN for a non-positive standard error (kernel tier)", () => {
    const prior: EffectPrior = {
      family: "assumed",
      components: [{ component: { kind: "point", at: 0 }, weight: 1 }],
    };
    expect(probabilityOfShipping(prior, 0, 0.01)).toBeNaN();
    expect(expectedShippedEffect(prior, Number.NaN, 0.01)).toBeNaN();
  });
  it("the half-t density integrates to the textbook constant: f(0) = 2 / (pi sqrt 3) at 3 df", () => {
    // Student t density at 0 with 3 df: Gamma(2) / (sqrt(3 pi) Gamma(3/2)) = 2 / (pi sqrt(3)).
    expectClose("studentTDensity(0, 3)", { df: 3 }, studentTDensity(0, 3), 2 / (Math.PI * Math.sqrt(3)), {
      relative: 1e-14,
    });
  });
  it("the multiplied-out t density equals the exp/log form; Cauchy at 1 df: 1 / (pi (1 + x^2))", () => {
    for (const df of [1, 2, 3, 4, 4.5, 7, 30, 31, 40]) {
      const fast = studentTDensityFunction(df);
      for (const x of [0, 0.3, -1, 2.5, 10, -80, 1e4]) {
        expectClose("studentTDensityFunction", { df, x }, fast(x), studentTDensity(x, df), {
          relative: 1e-13,
        });
      }
    }
    // The Cauchy density (t with 1 df), common knowledge.
    expectClose("Cauchy density", { x: 2 }, studentTDensityFunction(1)(2), 1 / (5 * Math.PI), {
      relative: 1e-15,
    });
    expect(studentTDensityFunction(0)(1)).toBeNaN();
  });
  it("a repeated half-t partial (memoised) returns the same numbers", () => {
    const component: PriorComponent = { kind: "halfT", sign: 1, scale: 0.0123, df: 3 };
    const first = componentPartial(component, 0.004, 0.007, 0, Number.POSITIVE_INFINITY);
    const again = componentPartial(component, 0.004, 0.007, 0, Number.POSITIVE_INFINITY);
    expect(again).toEqual(first);
    const other = componentPartial(component, 0.004, 0.0071, 0, Number.POSITIVE_INFINITY);
    expect(other.probability).toBeLessThan(first.probability);
  });
});
