import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { sampleRatioMismatch } from "../../src/stats/sample-ratio-mismatch.ts";
import { readCalculatorFixture } from "./fixture.ts";
import { expectClose } from "./tolerance.ts";

interface SampleRatioMismatchCase {
  readonly counts: number[];
  readonly plannedShares: number[];
  readonly statistic: number;
  readonly df: number;
  readonly pValue: number;
}

const statisticTolerance = { relative: 1e-13 };
// The upper incomplete gamma is computed directly, so even tiny p-values keep ~1e-12 relative accuracy.
const pValueTolerance = { relative: 1e-11, absolute: 1e-300 };

describe("sampleRatioMismatch", () => {
  // Reference: R chisq.test(counts, p = plannedShares), fixture from generate.R.
  const fixture = readCalculatorFixture<SampleRatioMismatchCase>("sample-ratio-mismatch");
  for (const example of fixture.cases) {
    it(`matches R chisq.test for counts ${example.counts.join("/")}`, () => {
      const result = sampleRatioMismatch(example.counts, example.plannedShares);
      const inputs = { counts: example.counts, plannedShares: example.plannedShares };
      expectClose("SRM statistic", inputs, result.statistic, example.statistic, statisticTolerance);
      expect(result.df).toBe(example.df);
      expectClose("SRM p-value", inputs, result.pValue, example.pValue, pValueTolerance);
    });
  }

  it("accepts shares that do not sum to 1 (a 2:1:1 plan)", () => {
    const normalised = sampleRatioMismatch([20500, 10000, 10100], [0.5, 0.25, 0.25]);
    const ratio = sampleRatioMismatch([20500, 10000, 10100], [2, 1, 1]);
    expectClose(
      "SRM statistic",
      { plan: "2:1:1" },
      ratio.statistic,
      normalised.statistic,
      statisticTolerance,
    );
  });

  it("throws a typed error on malformed input", () => {
    expect(() => sampleRatioMismatch([10], [1])).toThrow(StatsInputError);
    expect(() => sampleRatioMismatch([10, 12], [0.5, 0.3, 0.2])).toThrow(StatsInputError);
    expect(() => sampleRatioMismatch([10, -1], [0.5, 0.5])).toThrow(StatsInputError);
    expect(() => sampleRatioMismatch([10, 1.5], [0.5, 0.5])).toThrow(StatsInputError);
    expect(() => sampleRatioMismatch([0, 0], [0.5, 0.5])).toThrow(StatsInputError);
    expect(() => sampleRatioMismatch([10, 12], [0.5, 0])).toThrow(StatsInputError);
  });

  it("properties: p-value in [0, 1], statistic >= 0, exact split gives p = 1, inputs never mutated", () => {
    fc.assert(
      fc.property(
        fc.array(fc.integer({ min: 0, max: 1_000_000 }), { minLength: 2, maxLength: 6 }),
        fc.array(fc.double({ min: 0.01, max: 10, noNaN: true }), { minLength: 6, maxLength: 6 }),
        (counts, shareSeeds) => {
          fc.pre(counts.some((count) => count > 0));
          const shares = shareSeeds.slice(0, counts.length);
          const countsCopy = [...counts];
          const sharesCopy = [...shares];
          const result = sampleRatioMismatch(counts, shares);
          expect(result.statistic).toBeGreaterThanOrEqual(0);
          expect(result.pValue).toBeGreaterThanOrEqual(0);
          expect(result.pValue).toBeLessThanOrEqual(1);
          expect(result.df).toBe(counts.length - 1);
          expect(counts).toEqual(countsCopy);
          expect(shares).toEqual(sharesCopy);
        },
      ),
    );
    const exact = sampleRatioMismatch([500, 250, 250], [2, 1, 1]);
    expect(exact.statistic).toBe(0);
    expect(exact.pValue).toBe(1);
  });
});
