import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { expectClose } from "../stats/tolerance.ts";
import { countsRow, createImportTestDb, resultOf, toCsv } from "./import-helpers.ts";

// Expected values are worked by hand to 7 significant figures (z_0.975 = 1.959964 from the
// standard normal table, Abramowitz & Stegun 1964, table 26.5).
const handTolerance = { relative: 1e-6 };

let context: Awaited<ReturnType<typeof createImportTestDb>>;
beforeEach(async () => {
  context = await createImportTestDb();
});
afterEach(() => context.dispose());

const base = {
  experiment: "exp-1",
  name: "Lighter product page",
  metric: "revenue_per_user",
  metric_kind: "continuous",
  direction: "increase",
};

describe("import: every input form of statistics.md section 1", () => {
  it("counts: 100/1000 against 120/1000 (worked by hand, delta method)", async () => {
    // y = 0.12/0.1 - 1 = 0.2; s = 1.2 * sqrt(0.88/120 + 0.9/100) = 1.2 * sqrt(0.0163333) = 0.1533623.
    const report = await context.run(toCsv([countsRow()]));
    expect(report.errors).toEqual([]);
    const result = await resultOf(context.db, "exp-1", "signup_rate");
    expect(result.inputForm).toBe("counts");
    expectClose("lift", "counts row", result.lift, 0.2, handTolerance);
    expectClose("lift SE", "counts row", result.liftSe, 0.1533623, handTolerance);
    expectClose(
      "absolute difference",
      "counts row",
      result.absoluteDifference ?? Number.NaN,
      0.02,
      handTolerance,
    );
    expect(result.isPrimary).toBe(true);
  });

  it("means: 10 (sd 5) against 11 (sd 5), 100 a side (worked by hand, delta method)", async () => {
    // y = 0.1; Var = 25/(100*100) + 121*25/(100*10^4) = 0.005525; s = 0.07433034.
    const row = {
      ...base,
      control_n: 100,
      treatment_n: 100,
      control_mean: 10,
      control_sd: 5,
      treatment_mean: 11,
      treatment_sd: 5,
    };
    await context.run(toCsv([row]));
    const result = await resultOf(context.db, "exp-1", "revenue_per_user");
    expect(result.inputForm).toBe("means");
    expectClose("lift", row, result.lift, 0.1, handTolerance);
    expectClose("lift SE", row, result.liftSe, 0.07433034, handTolerance);
  });

  it("estimate + interval, written in percent: 2% in [0.04%, 3.96%] (worked by hand)", async () => {
    // "2%" is 0.02; s = (0.0396 - 0.0004) / (2 * 1.959964) = 0.01000018.
    const row = { ...base, lift: "2%", lift_ci_low: "0.04%", lift_ci_high: "3.96%", ci_level: "95%" };
    const report = await context.run(toCsv([row]));
    expect(report.notes).toEqual([]);
    const result = await resultOf(context.db, "exp-1", "revenue_per_user");
    expect(result.inputForm).toBe("interval");
    expectClose("lift", row, result.lift, 0.02, handTolerance);
    expectClose("lift SE", row, result.liftSe, 0.01000018, handTolerance);
    expect(result.input["lift"]).toBe("2%");
  });

  it("estimate + asymmetric interval: read on the log scale and said so (worked by hand, delta method)", async () => {
    // s = 1.1 * (ln 1.3 - ln 0.95) / (2 * 1.959964) = 1.1 * 0.08001615 = 0.08801777.
    const row = { ...base, lift: 0.1, lift_ci_low: -0.05, lift_ci_high: 0.3 };
    const report = await context.run(toCsv([row]));
    expect(
      report.notes.some(
        (note) => note.row === 2 && note.column === "lift_ci_low" && /log scale/.test(note.message),
      ),
    ).toBe(true);
    expect(report.notes.some((note) => note.column === "ci_level")).toBe(true);
    const result = await resultOf(context.db, "exp-1", "revenue_per_user");
    expectClose("lift SE", row, result.liftSe, 0.08801777, handTolerance);
    expect(result.notes).toMatch(/log scale/);
  });

  it("estimate + two-sided p-value (worked by hand)", async () => {
    // s = 0.02 / z_0.975 = 0.02 / 1.959964 = 0.01020427.
    const row = { ...base, lift: 0.02, p_value: 0.05 };
    await context.run(toCsv([row]));
    const result = await resultOf(context.db, "exp-1", "revenue_per_user");
    expect(result.inputForm).toBe("p_value");
    expectClose("lift SE", row, result.liftSe, 0.01020427, handTolerance);
  });

  it("estimate + standard error, as given; percent on both", async () => {
    const row = { ...base, lift: "1.2%", lift_se: "0.5%" };
    await context.run(toCsv([row]));
    const result = await resultOf(context.db, "exp-1", "revenue_per_user");
    expect(result.inputForm).toBe("standard_error");
    expectClose("lift", row, result.lift, 0.012, { relative: 1e-15 });
    expectClose("lift SE", row, result.liftSe, 0.005, { relative: 1e-15 });
  });

  it("flips the sign of a decrease metric, not its SE or absolute difference (statistics.md section 0)", async () => {
    // Churn 100/1000 -> 120/1000 is a 20% rise, so -0.2 after the flip; s = 0.1533623 as above.
    const row = countsRow({ metric: "churn_rate", direction: "decrease" });
    await context.run(toCsv([row]));
    const result = await resultOf(context.db, "exp-1", "churn_rate");
    expectClose("lift", row, result.lift, -0.2, handTolerance);
    expectClose("lift SE", row, result.liftSe, 0.1533623, handTolerance);
    expectClose("absolute difference", row, result.absoluteDifference ?? Number.NaN, 0.02, handTolerance);
    const interval = { ...base, metric: "page_latency", direction: "decrease", lift: "-3%", lift_se: "1%" };
    await context.run(toCsv([interval]), { fileName: "latency.csv" });
    expect((await resultOf(context.db, "exp-1", "page_latency")).lift).toBeCloseTo(0.03, 15);
  });

  it("accepts a row that gives several forms that agree, and keeps the first form's values", async () => {
    // Counts give 0.2 and 0.1533623; lift "20%" and lift_se 0.153 and a 95% interval agree to rounding.
    const row = countsRow({
      lift: "20%",
      lift_se: 0.153,
      lift_ci_low: -0.1,
      lift_ci_high: 0.5,
      p_value: 0.19,
    });
    const report = await context.run(toCsv([row]));
    expect(report.errors).toEqual([]);
    const result = await resultOf(context.db, "exp-1", "signup_rate");
    expect(result.inputForm).toBe("counts");
    expectClose("lift SE", row, result.liftSe, 0.1533623, handTolerance);
  });

  it("stores the input exactly as given and the sample ratio mismatch test of the arm counts", async () => {
    // 1000 vs 1200 under 50/50: X^2 = (100^2 + 100^2)/1100 = 18.18; p = 2.007866e-5 < 0.0005, flagged
    // (reference: scipy.stats.chisquare([1000, 1200]) -> 2.007865612426481e-05).
    const row = countsRow({
      control_n: 1000,
      treatment_n: 1200,
      control_conversions: 100,
      treatment_conversions: 144,
      planned_split: "50/50",
    });
    const report = await context.run(toCsv([row]));
    const result = await resultOf(context.db, "exp-1", "signup_rate");
    expect(result.srmFlagged).toBe(true);
    expectClose("SRM p-value", row, result.srmPValue ?? Number.NaN, 2.007866e-5, { relative: 1e-6 });
    expect(report.notes.some((note) => /sample ratio mismatch/.test(note.message))).toBe(true);
    expect(result.input).toEqual(
      Object.fromEntries(Object.entries(row).map(([key, value]) => [key, String(value)])),
    );
    // Under the planned 45/55 split the same counts are expected: X^2 = 0, not flagged.
    await context.run(
      toCsv([
        { ...row, planned_split: "0.45/0.55", control_n: 900, treatment_n: 1100, control_conversions: 90 },
      ]),
    );
    const planned = await resultOf(context.db, "exp-1", "signup_rate");
    expect(planned.srmFlagged).toBe(false);
    expectClose("SRM p-value", "900/1100 at 45/55", planned.srmPValue ?? Number.NaN, 1, { absolute: 1e-12 });
  });
});
