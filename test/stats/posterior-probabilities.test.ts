/**
 * The probabilities-only batch kernel agrees with the full posterior (posteriorOf and
 * posteriorProbabilityAbove in posterior.ts, themselves checked against R in posterior.test.ts) on
 * random priors mixing every component kind and random results, including results far in the tails.
 */
import { describe, expect, it } from "vitest";
import type { EffectPrior, PriorComponent } from "../../src/stats/effect-prior.ts";
import {
  posteriorOf,
  posteriorProbabilityAbove,
  posteriorProbabilityAboveColumn,
} from "../../src/stats/posterior.ts";
import { posteriorProbabilityColumns } from "../../src/stats/posterior-probabilities.ts";
import { createRandom } from "../../src/stats/random.ts";

// Both compute the same closed forms; the gap is rounding and posterior.ts dropping posterior
// components below a 1e-15 share.
const probabilityTolerance = 1e-9;
// Means are compared relative to the scale of the problem (|y| + s).
const meanRelativeTolerance = 1e-8;

function randomComponent(random: ReturnType<typeof createRandom>): PriorComponent {
  const scale = 0.002 + 0.05 * random.uniform();
  switch (random.integer(6)) {
    case 0:
      return { kind: "point", at: random.uniform() < 0.5 ? 0 : 0.04 * random.normal() };
    case 1:
      return { kind: "normal", mean: random.uniform() < 0.7 ? 0 : 0.02 * random.normal(), scale };
    case 2: {
      const lower = random.uniform() < 0.5 ? 0 : -scale;
      return { kind: "uniform", lower, upper: lower === 0 ? scale : 0 };
    }
    case 3:
      return { kind: "halfNormal", sign: random.uniform() < 0.5 ? 1 : -1, scale };
    case 4:
      return { kind: "halfT", sign: random.uniform() < 0.5 ? 1 : -1, scale, df: 2 + 8 * random.uniform() };
    default: {
      const lower = -0.03 * random.uniform();
      return {
        kind: "truncatedNormal",
        mean: 0.01 * random.normal(),
        scale,
        lower,
        upper: lower + 0.06 * random.uniform() + 0.001,
      };
    }
  }
}

function randomPrior(random: ReturnType<typeof createRandom>): EffectPrior {
  const count = 1 + random.integer(5);
  const raw = Array.from({ length: count }, () => 0.05 + random.uniform());
  const total = raw.reduce((sum, value) => sum + value, 0);
  return {
    family: "assumed",
    components: raw.map((weight) => ({ component: randomComponent(random), weight: weight / total })),
  };
}

/** A random prior and four results, the last one far in the tails. */
function randomCase(random: ReturnType<typeof createRandom>): {
  prior: EffectPrior;
  y: Float64Array;
  s: Float64Array;
} {
  const prior = randomPrior(random);
  const y = Float64Array.from({ length: 4 }, (_, i) =>
    i === 3 ? 0.3 * random.normal() : 0.04 * random.normal(),
  );
  const s = Float64Array.from({ length: 4 }, () => 0.002 + 0.03 * random.uniform());
  return { prior, y, s };
}

describe("posteriorProbabilityColumns", () => {
  it("matches posteriorOf and posteriorProbabilityAbove on 400 random cases", () => {
    const random = createRandom(20261202);
    const thresholds = [0, 0.005, 0.02];
    let compared = 0;
    for (let trial = 0; trial < 100; trial++) {
      const { prior, y, s } = randomCase(random);
      const columns = posteriorProbabilityColumns(prior, y, s, thresholds);
      for (let i = 0; i < y.length; i++) {
        const yi = y[i] as number;
        const si = s[i] as number;
        const expected = posteriorOf(prior, yi, si);
        const context = JSON.stringify({ prior, y: yi, s: si });
        const check = (name: string, actual: number, wanted: number, tolerance: number) => {
          if (!(Math.abs(actual - wanted) <= tolerance))
            throw new Error(
              `${name}: inputs ${context}, actual ${actual}, expected ${wanted}, tolerance ${tolerance}`,
            );
          compared++;
        };
        check("probNull", columns.probNull[i] as number, expected.probNull, probabilityTolerance);
        check("probNegative", columns.probNegative[i] as number, expected.probNegative, probabilityTolerance);
        check("probPositive", columns.probPositive[i] as number, expected.probPositive, probabilityTolerance);
        check("mean", columns.mean[i] as number, expected.mean, meanRelativeTolerance * (Math.abs(yi) + si));
        thresholds.forEach((threshold, j) => {
          check(
            `probAbove(${threshold})`,
            (columns.probAbove[j] as Float64Array)[i] as number,
            posteriorProbabilityAbove(prior, yi, si, threshold),
            probabilityTolerance,
          );
        });
      }
    }
    // 400 results x (4 figures + 3 thresholds).
    expect(compared).toBe(400 * 7);
  });

  it("refuses a result without a positive standard error, naming its index", () => {
    const prior: EffectPrior = {
      family: "assumed",
      components: [{ component: { kind: "point", at: 0 }, weight: 1 }],
    };
    expect(() => posteriorProbabilityColumns(prior, [0.01, 0.02], [0.01, 0])).toThrow(/s\[1\]/);
  });
});

describe("posteriorProbabilityAboveColumn", () => {
  it("is posteriorProbabilityAbove row by row, bit for bit, and agrees with the batch kernel", () => {
    const random = createRandom(20261204);
    let compared = 0;
    for (let trial = 0; trial < 100; trial++) {
      const { prior, y, s } = randomCase(random);
      for (const threshold of [0, 0.005, 0.02]) {
        const column = posteriorProbabilityAboveColumn(prior, y, s, threshold);
        const batch = posteriorProbabilityColumns(prior, y, s, [threshold]).probAbove[0] as Float64Array;
        for (let i = 0; i < y.length; i++) {
          expect(
            Object.is(column[i], posteriorProbabilityAbove(prior, y[i] as number, s[i] as number, threshold)),
          ).toBe(true);
          expect(Math.abs((column[i] as number) - (batch[i] as number))).toBeLessThanOrEqual(
            probabilityTolerance,
          );
          compared++;
        }
      }
    }
    expect(compared).toBe(1200);
  });

  it("refuses a negative threshold and a result without a positive standard error", () => {
    const prior: EffectPrior = {
      family: "assumed",
      components: [{ component: { kind: "point", at: 0 }, weight: 1 }],
    };
    expect(() => posteriorProbabilityAboveColumn(prior, [0.01], [0.01], -0.001)).toThrow(/threshold/);
    expect(() => posteriorProbabilityAboveColumn(prior, [0.01, 0.02], [0.01, 0], 0.001)).toThrow(/s\[1\]/);
  });
});
