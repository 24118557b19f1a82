import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { liftFromPValue } from "../../src/stats/lift-from-p-value.ts";
import { expectClose } from "./tolerance.ts";

// Worked by hand to 7 significant figures; z_0.975 = 1.959964 and z_0.995 = 2.575829 from the
// standard normal table (Abramowitz & Stegun 1964, table 26.5).
const handTolerance = { relative: 1e-6 };

describe("liftFromPValue", () => {
  it("inverts a two-sided p-value of 0.05 (worked by hand)", () => {
    // s = |0.02| / z_{1 - 0.05/2} = 0.02 / 1.959964 = 0.01020427.
    const inputs = { lift: 0.02, pValue: 0.05 };
    expectClose("standard error", inputs, liftFromPValue(inputs).standardError, 0.01020427, handTolerance);
  });

  it("inverts a negative lift with p = 0.01 (worked by hand)", () => {
    // s = |-0.03| / 2.575829 = 0.01164673.
    const inputs = { lift: -0.03, pValue: 0.01 };
    const result = liftFromPValue(inputs);
    expectClose("standard error", inputs, result.standardError, 0.01164673, handTolerance);
    expect(result.lift).toBe(-0.03);
  });

  it("keeps tiny p-values finite", () => {
    // z_{1 - p/2} for p = 1e-40 is about 13.3 (the normal tail); 1 - p/2 would round to 1.
    const result = liftFromPValue({ lift: 0.5, pValue: 1e-40 });
    expect(result.standardError).toBeGreaterThan(0.5 / 14);
    expect(result.standardError).toBeLessThan(0.5 / 13);
  });

  it("refuses p = 1, p outside (0, 1) and a zero lift (no information)", () => {
    // statistics.md section 1: refuse p = 1 or y = 0.
    expect(() => liftFromPValue({ lift: 0.02, pValue: 1 })).toThrow(StatsInputError);
    expect(() => liftFromPValue({ lift: 0.02, pValue: 0 })).toThrow(StatsInputError);
    expect(() => liftFromPValue({ lift: 0.02, pValue: 1.5 })).toThrow(StatsInputError);
    expect(() => liftFromPValue({ lift: 0, pValue: 0.3 })).toThrow(StatsInputError);
  });
});
