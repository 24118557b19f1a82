import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { kolmogorovSmirnovUniform } from "../../src/stats/uniformity-test.ts";
import { readReviewFixture } from "./review-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface UniformityCase {
  values: number[];
  statistic: number;
  pValue: number;
  exact: boolean;
}

const fixture = readReviewFixture<UniformityCase>("uniformity");
const statisticTolerance = { absolute: 1e-15 };
// The exact p-value is the same published algorithm as R's C code (Marsaglia, Tsang & Wang 2003);
// the asymptotic one sums the same series, R stopping at a 1e-6 term tolerance.
const exactPValueTolerance = { relative: 1e-10, absolute: 1e-14 };
const asymptoticPValueTolerance = { absolute: 1e-6 };

describe("kolmogorovSmirnovUniform against R ks.test(x, 'punif')", () => {
  it.each(
    fixture.cases.map((c) => [`n = ${c.values.length} (${c.exact ? "exact" : "asymptotic"})`, c] as const),
  )("%s", (_, c) => {
    const result = kolmogorovSmirnovUniform(c.values);
    const inputs = { n: c.values.length, statistic: c.statistic };
    expect(result.method).toBe(c.exact ? "exact" : "asymptotic");
    expectClose("statistic D", inputs, result.statistic, c.statistic, statisticTolerance);
    expectClose(
      "p-value",
      inputs,
      result.pValue,
      c.pValue,
      c.exact ? exactPValueTolerance : asymptoticPValueTolerance,
    );
  });

  it("p-values are probabilities and the input is not mutated", () => {
    fc.assert(
      fc.property(
        fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 1, maxLength: 150 }),
        (values) => {
          const copy = [...values];
          const result = kolmogorovSmirnovUniform(values);
          expect(result.pValue).toBeGreaterThanOrEqual(0);
          expect(result.pValue).toBeLessThanOrEqual(1);
          expect(values).toEqual(copy);
        },
      ),
    );
  });

  it("refuses values outside [0, 1]", () => {
    expect(() => kolmogorovSmirnovUniform([0.2, 1.2])).toThrow(StatsInputError);
    expect(() => kolmogorovSmirnovUniform([])).toThrow(StatsInputError);
  });
});
