import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { exactBinomialTest } from "../../src/stats/caliper-test.ts";
import {
  binomialLowerTail,
  binomialUpperTail,
  clopperPearsonInterval,
} from "../../src/stats/clopper-pearson.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { readReviewFixture } from "./review-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface BinomialCase {
  successes: number;
  trials: number;
  probability: number;
  level: number;
  lower: number;
  upper: number;
  pValueTwoSided: number;
  pValueGreater: number;
  pValueLess: number;
}

const fixture = readReviewFixture<BinomialCase>("binomial");
// R computes the limits with qbeta (Clopper-Pearson as beta quantiles); we bisect on exact tails.
const intervalTolerance = { relative: 1e-9, absolute: 1e-15 };
// p-values sum Loader-form probabilities, as R's dbinom does; summation order differs.
const pValueTolerance = { relative: 1e-10, absolute: 1e-300 };

describe("clopperPearsonInterval against R binom.test (Clopper & Pearson 1934)", () => {
  it.each(fixture.cases.map((c) => [`${c.successes}/${c.trials} at ${c.level}`, c] as const))(
    "%s",
    (_, c) => {
      const interval = clopperPearsonInterval(c.successes, c.trials, c.level);
      const inputs = { successes: c.successes, trials: c.trials, level: c.level };
      expectClose("lower", inputs, interval.lower, c.lower, intervalTolerance);
      expectClose("upper", inputs, interval.upper, c.upper, intervalTolerance);
    },
  );
});

describe("exactBinomialTest against R binom.test p-values", () => {
  it.each(fixture.cases.map((c) => [`${c.successes}/${c.trials}, p = ${c.probability}`, c] as const))(
    "%s",
    (_, c) => {
      const inputs = { successes: c.successes, trials: c.trials, probability: c.probability };
      const two = exactBinomialTest(c.successes, c.trials, c.probability, "two-sided").pValue;
      const greater = exactBinomialTest(c.successes, c.trials, c.probability, "greater").pValue;
      const less = exactBinomialTest(c.successes, c.trials, c.probability, "less").pValue;
      expectClose("two-sided p-value", inputs, two, c.pValueTwoSided, pValueTolerance);
      expectClose("greater p-value", inputs, greater, c.pValueGreater, pValueTolerance);
      expectClose("less p-value", inputs, less, c.pValueLess, pValueTolerance);
    },
  );
});

describe("binomial tails and interval properties", () => {
  it("tails are probabilities and complementary", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 400 }),
        fc.double({ min: 0.001, max: 0.999, noNaN: true }),
        fc.nat(),
        (n, p, seed) => {
          const k = seed % (n + 1);
          const lower = binomialLowerTail(k, n, p);
          const upper = binomialUpperTail(k + 1, n, p);
          expect(lower).toBeGreaterThanOrEqual(0);
          expect(lower).toBeLessThanOrEqual(1);
          expect(Math.abs(lower + upper - 1)).toBeLessThan(1e-12);
        },
      ),
    );
  });

  it("the interval contains the estimate and widens with the level", () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 500 }), fc.nat(), (n, seed) => {
        const x = seed % (n + 1);
        const narrow = clopperPearsonInterval(x, n, 0.8);
        const wide = clopperPearsonInterval(x, n, 0.99);
        expect(narrow.lower).toBeLessThanOrEqual(x / n);
        expect(narrow.upper).toBeGreaterThanOrEqual(x / n);
        expect(wide.lower).toBeLessThanOrEqual(narrow.lower);
        expect(wide.upper).toBeGreaterThanOrEqual(narrow.upper);
      }),
    );
  });

  it("refuses impossible counts with a typed error", () => {
    expect(() => clopperPearsonInterval(5, 4)).toThrow(StatsInputError);
    expect(() => clopperPearsonInterval(1.5, 4)).toThrow(StatsInputError);
    expect(() => clopperPearsonInterval(1, 0)).toThrow(StatsInputError);
    expect(() => clopperPearsonInterval(1, 4, 1)).toThrow(StatsInputError);
  });
});
