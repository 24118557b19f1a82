import { describe, expect, it } from "vitest";
import { StatsInputError } from "../../src/stats/errors.ts";
import { liftFromInterval } from "../../src/stats/lift-from-interval.ts";
import { expectClose } from "./tolerance.ts";

// Worked by hand to 7 significant figures; normal quantiles from the standard normal table
// (Abramowitz & Stegun 1964, table 26.5): z_0.975 = 1.959964, z_0.95 = 1.644854.
const handTolerance = { relative: 1e-6 };

describe("liftFromInterval", () => {
  it("reads a symmetric 95% interval (worked by hand, delta method not needed)", () => {
    // s = (0.0396 - 0.0004) / (2 * 1.959964) = 0.0392 / 3.919928 = 0.01000018.
    const inputs = { lift: 0.02, low: 0.0004, high: 0.0396, level: 0.95 };
    const result = liftFromInterval(inputs);
    expect(result.scale).toBe("linear");
    expectClose("standard error", inputs, result.standardError, 0.01000018, handTolerance);
    expect(result.lift).toBe(0.02);
  });

  it("reads a symmetric 90% interval", () => {
    // s = (0.05 - (-0.01)) / (2 * 1.644854) = 0.06 / 3.289707 = 0.01823870.
    const inputs = { lift: 0.02, low: -0.01, high: 0.05, level: 0.9 };
    expectClose("standard error", inputs, liftFromInterval(inputs).standardError, 0.0182387, handTolerance);
  });

  it("reads an asymmetric interval on the log scale (worked by hand, delta method)", () => {
    // lift 0.1 in [-0.05, 0.3]: half-widths 0.2 and 0.15 differ, so log scale:
    // s_log = (ln 1.3 - ln 0.95) / (2 * 1.959964) = (0.26236426 + 0.05129329) / 3.919928 = 0.08001615;
    // delta method back to the lift: s = (1 + 0.1) * 0.08001615 = 0.08801777.
    const inputs = { lift: 0.1, low: -0.05, high: 0.3, level: 0.95 };
    const result = liftFromInterval(inputs);
    expect(result.scale).toBe("log");
    expectClose("standard error", inputs, result.standardError, 0.08801777, handTolerance);
  });

  it("refuses an estimate outside its interval, an empty interval and a bad level", () => {
    expect(() => liftFromInterval({ lift: 0.2, low: 0, high: 0.1, level: 0.95 })).toThrow(StatsInputError);
    expect(() => liftFromInterval({ lift: 0.1, low: 0.1, high: 0.1, level: 0.95 })).toThrow(StatsInputError);
    expect(() => liftFromInterval({ lift: 0.1, low: 0, high: 0.2, level: 95 })).toThrow(StatsInputError);
    expect(() => liftFromInterval({ lift: -0.5, low: -1.2, high: 0.4, level: 0.95 })).toThrow(
      StatsInputError,
    );
  });
});
