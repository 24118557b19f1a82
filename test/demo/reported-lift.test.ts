import { describe, expect, it } from "vitest";
import { reportResult } from "../../src/demo/reported-lift.ts";
import { expectClose } from "../stats/tolerance.ts";

// 100 of 1000 vs 120 of 1000, worked by hand with the delta method (statistics.md section 1):
// y = 0.12 / 0.10 - 1 = 0.2; Var(log ratio) = 0.88 / 120 + 0.90 / 100 = 0.0163333...;
// s = 1.2 * sqrt(0.0163333) = 0.1533623.
const counts = {
  kind: "binary",
  controlN: 1000,
  treatmentN: 1000,
  controlConversions: 100,
  treatmentConversions: 120,
} as const;
const handLift = 0.2;
const handSe = 0.1533623;
/** Seven written decimals of the SE, and the p-value's six significant digits. */
const writtenSeTolerance = { absolute: 1e-7 };

describe("reportResult: how a demo team writes a result", () => {
  it("writes counts as they are and derives the delta-method lift and SE", () => {
    const reported = reportResult(counts, { style: "raw", percent: false, level: 0.95 });
    expect(reported.cells).toEqual({
      control_n: "1000",
      treatment_n: "1000",
      control_conversions: "100",
      treatment_conversions: "120",
    });
    expect(reported.form).toBe("counts");
    expectClose("lift", counts, reported.lift, handLift, { absolute: 1e-12 });
    expectClose("se", counts, reported.standardError, handSe, writtenSeTolerance);
  });

  it("writes a symmetric 95 % interval: half-width 1.959964 * 0.1533623 = 0.3005846 (by hand)", () => {
    const reported = reportResult(counts, { style: "interval", percent: false, level: 0.95 });
    expect(reported.cells).toMatchObject({
      lift: "0.2000000",
      lift_ci_low: "-0.1005846",
      lift_ci_high: "0.5005846",
    });
    expect(reported.cells.ci_level).toBe("0.95");
    expectClose("se from interval", reported.cells, reported.standardError, handSe, writtenSeTolerance);
    const percent = reportResult(counts, { style: "interval", percent: true, level: 0.95 });
    expect(percent.cells).toMatchObject({
      lift: "20.00000%",
      lift_ci_low: "-10.05846%",
      lift_ci_high: "50.05846%",
      ci_level: "95%",
    });
    expect(percent.percent).toBe(true);
    expectClose("se from percent interval", percent.cells, percent.standardError, handSe, writtenSeTolerance);
  });

  it("writes a two-sided p-value: z = 0.2 / 0.1533623 = 1.30410, p = 2 (1 - Phi(1.30410)) = 0.192199", () => {
    const reported = reportResult(counts, { style: "p_value", percent: false, level: 0.95 });
    expect(reported.cells).toMatchObject({ lift: "0.2000000", p_value: "0.192199" });
    expectClose("se from p", reported.cells, reported.standardError, handSe, { relative: 1e-5 });
  });

  it("writes the SE with a % sign when asked", () => {
    const reported = reportResult(counts, { style: "standard_error", percent: true, level: 0.95 });
    expect(reported.cells).toMatchObject({ lift: "20.00000%", lift_se: "15.33623%" });
    expect(reported.standardError).toBeCloseTo(0.1533623, 12);
  });

  it("gives the SE instead of a p-value too small to print", () => {
    const strong = {
      kind: "binary",
      controlN: 100000,
      treatmentN: 100000,
      controlConversions: 1000,
      treatmentConversions: 1400,
    } as const;
    const reported = reportResult(strong, { style: "p_value", percent: false, level: 0.95 });
    expect(reported.form).toBe("standard_error");
    expect(reported.cells.p_value).toBeUndefined();
  });

  it("writes means and sds with four decimals and derives from the written values", () => {
    const means = {
      kind: "continuous",
      controlN: 100,
      treatmentN: 100,
      controlMean: 10,
      controlSd: 5,
      treatmentMean: 11,
      treatmentSd: 5,
    } as const;
    const reported = reportResult(means, { style: "raw", percent: false, level: 0.95 });
    expect(reported.cells).toMatchObject({ control_mean: "10.0000", treatment_sd: "5.0000" });
    // Delta method by hand: Var = 25 / (100 * 100) + 121 * 25 / (100 * 10^4) = 0.0025 + 0.003025; s = 0.0743303.
    expectClose("se from means", means, reported.standardError, 0.0743303, writtenSeTolerance);
    expectClose("lift from means", means, reported.lift, 0.1, { absolute: 1e-12 });
  });
});
