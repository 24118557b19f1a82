import { describe, expect, it } from "vitest";
import { caliperTest } from "../../src/stats/caliper-test.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { readReviewFixture } from "./review-fixture.ts";
import { expectClose } from "./tolerance.ts";

interface CaliperCase {
  z: number[];
  criticalZ: number;
  width: number;
  above: number;
  below: number;
  pValue: number;
  pValueTwoSided: number;
}

const fixture = readReviewFixture<CaliperCase>("caliper");
const pValueTolerance = { relative: 1e-10 };

// Gerber & Malhotra (2008) caliper test; reference counts and p-values from R binom.test.
describe("caliperTest against R counts and binom.test", () => {
  it.each(fixture.cases.map((c, i) => [`case ${i}: n = ${c.z.length}, width ${c.width}`, c] as const))(
    "%s",
    (_, c) => {
      const result = caliperTest(c.z, { criticalZ: c.criticalZ, width: c.width });
      const inputs = { n: c.z.length, width: c.width, above: c.above, below: c.below };
      expect(result.above, JSON.stringify(inputs)).toBe(c.above);
      expect(result.below, JSON.stringify(inputs)).toBe(c.below);
      expectClose("one-sided p-value", inputs, result.pValue, c.pValue, pValueTolerance);
      expectClose("two-sided p-value", inputs, result.pValueTwoSided, c.pValueTwoSided, pValueTolerance);
    },
  );

  it("states its band and leaves p-values undefined when the band is empty", () => {
    const result = caliperTest([0, 5], { criticalZ: 1.959964, width: 0.1 });
    expect(result.total).toBe(0);
    expect(result.pValue).toBeNaN();
    expect(result.method).toContain("10 % caliper");
    expect(() => caliperTest([Number.NaN], { criticalZ: 1.96 })).toThrow(StatsInputError);
  });
});
