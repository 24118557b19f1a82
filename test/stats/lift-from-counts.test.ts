import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { liftFromCounts } from "../../src/stats/lift-from-counts.ts";
import { expectClose } from "./tolerance.ts";

// The expected values below are worked by hand to 7 significant figures, so they are compared
// to that precision.
const handTolerance = { relative: 1e-6 };

describe("liftFromCounts", () => {
  it("converts 100/1000 against 120/1000 (worked by hand, delta method)", () => {
    // p_c = 0.1, p_t = 0.12, y = 0.12 / 0.1 - 1 = 0.2.
    // Var(log(p_t/p_c)) ~ (1 - 0.12)/(1000 * 0.12) + (1 - 0.1)/(1000 * 0.1) = 0.0073333 + 0.009 = 0.0163333;
    // s = (1 + 0.2) * sqrt(0.0163333) = 1.2 * 0.1278019 = 0.1533623. Absolute difference 0.12 - 0.1 = 0.02.
    const inputs = { controlConversions: 100, controlN: 1000, treatmentConversions: 120, treatmentN: 1000 };
    const result = liftFromCounts(inputs);
    expectClose("lift", inputs, result.lift, 0.2, handTolerance);
    expectClose("standard error", inputs, result.standardError, 0.1533623, handTolerance);
    expectClose("absolute difference", inputs, result.absoluteDifference ?? Number.NaN, 0.02, handTolerance);
  });

  it("converts equal rates in unequal arms, 50/500 against 40/400 (worked by hand, delta method)", () => {
    // p_c = p_t = 0.1, y = 0; Var ~ 0.9/(400 * 0.1) + 0.9/(500 * 0.1) = 0.0225 + 0.018 = 0.0405;
    // s = 1 * sqrt(0.0405) = 0.2012461.
    const inputs = { controlConversions: 50, controlN: 500, treatmentConversions: 40, treatmentN: 400 };
    const result = liftFromCounts(inputs);
    expectClose("lift", inputs, result.lift, 0, { absolute: 1e-15 });
    expectClose("standard error", inputs, result.standardError, 0.2012461, handTolerance);
  });

  it("refuses counts that give no finite positive standard error", () => {
    // statistics.md section 1: refuse s <= 0, non-finite values, proportions outside [0, 1], n < 2.
    const base = { controlConversions: 10, controlN: 100, treatmentConversions: 12, treatmentN: 100 };
    expect(() => liftFromCounts({ ...base, controlConversions: 0 })).toThrow(StatsInputError);
    expect(() => liftFromCounts({ ...base, treatmentConversions: 0 })).toThrow(StatsInputError);
    expect(() => liftFromCounts({ ...base, controlConversions: 100, treatmentConversions: 100 })).toThrow(
      StatsInputError,
    );
    expect(() => liftFromCounts({ ...base, treatmentConversions: 101 })).toThrow(StatsInputError);
    expect(() => liftFromCounts({ ...base, controlN: 1, controlConversions: 1 })).toThrow(StatsInputError);
    expect(() => liftFromCounts({ ...base, controlConversions: -1 })).toThrow(StatsInputError);
    expect(() => liftFromCounts({ ...base, treatmentN: 100.5 })).toThrow(StatsInputError);
  });

  it("gives a positive finite standard error for any valid counts, without mutating them", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 2, max: 1_000_000 }),
        fc.integer({ min: 2, max: 1_000_000 }),
        fc.double({ min: 0.001, max: 0.999, noNaN: true }),
        fc.double({ min: 0.001, max: 0.999, noNaN: true }),
        (controlN, treatmentN, controlShare, treatmentShare) => {
          const inputs = {
            controlN,
            treatmentN,
            controlConversions: Math.max(1, Math.min(controlN - 1, Math.round(controlShare * controlN))),
            treatmentConversions: Math.max(
              1,
              Math.min(treatmentN - 1, Math.round(treatmentShare * treatmentN)),
            ),
          };
          const copy = { ...inputs };
          const result = liftFromCounts(inputs);
          expect(inputs).toEqual(copy);
          expect(result.standardError).toBeGreaterThan(0);
          expect(Number.isFinite(result.standardError)).toBe(true);
          expect(result.lift).toBeGreaterThan(-1);
        },
      ),
    );
  });
});
