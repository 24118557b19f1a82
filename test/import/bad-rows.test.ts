import { afterEach, beforeEach, describe, expect, it } from "vitest";
import type { ImportRowError } from "../../src/import/import-file.ts";
import { type Cells, countsRow, createImportTestDb, importLog, toCsv } from "./import-helpers.ts";

let context: Awaited<ReturnType<typeof createImportTestDb>>;
beforeEach(async () => {
  context = await createImportTestDb();
});
afterEach(() => context.dispose());

/** Imports the rows (data rows start at CSV row 2) and returns the errors of a rejected import. */
async function errorsOf(rows: Cells[]): Promise<readonly ImportRowError[]> {
  const report = await context.run(toCsv(rows));
  expect(report.outcome).toBe("rejected");
  expect(report.created + report.updated + report.unchanged).toBe(0);
  return report.errors;
}

function expectError(
  errors: readonly ImportRowError[],
  row: number,
  column: string | null,
  pattern: RegExp,
): void {
  const found = errors.find(
    (error) => error.row === row && error.column === column && pattern.test(error.message),
  );
  expect(
    found,
    `expected an error at row ${row}, column ${column} matching ${pattern}; got ${JSON.stringify(errors)}`,
  ).toBeDefined();
}

const seRow = (overrides: Cells = {}): Cells => ({
  experiment: "exp-2",
  metric: "revenue_per_user",
  metric_kind: "continuous",
  direction: "increase",
  lift: 0.01,
  lift_se: 0.004,
  ...overrides,
});

describe("import: every kind of bad row is reported with row, column and a message", () => {
  it("unknown decision", async () => {
    expectError(
      await errorsOf([countsRow({ decision: "launched" })]),
      2,
      "decision",
      /not one of shipped, not_shipped, iterate, pending/,
    );
  });

  it("negative n, and n below 2", async () => {
    const errors = await errorsOf([
      countsRow({ control_n: -5 }),
      countsRow({ experiment: "exp-9", treatment_n: 1, treatment_conversions: 1 }),
    ]);
    expectError(errors, 2, "control_n", /must not be negative/);
    expectError(errors, 3, "treatment_n", /at least 2/);
  });

  it("conversions greater than n", async () => {
    expectError(
      await errorsOf([countsRow({ treatment_conversions: 1200 })]),
      2,
      "treatment_conversions",
      /exceed treatment_n 1000/,
    );
  });

  it("conversions greater than n in the control arm too, and negative conversions", async () => {
    const errors = await errorsOf([
      countsRow({ control_conversions: 1001 }),
      countsRow({ experiment: "exp-3", treatment_conversions: -4 }),
    ]);
    expectError(errors, 2, "control_conversions", /1001 conversions exceed control_n 1000/);
    expectError(errors, 3, "treatment_conversions", /must not be negative; got -4/);
  });

  it("p-value outside (0, 1): above 1, exactly 1, exactly 0, negative, and 140%", async () => {
    const errors = await errorsOf([
      seRow({ lift_se: "", p_value: 1.3 }),
      seRow({ experiment: "exp-3", lift_se: "", p_value: 1 }),
      seRow({ experiment: "exp-4", lift_se: "", p_value: 0 }),
      seRow({ experiment: "exp-5", lift_se: "", p_value: -0.02 }),
      seRow({ experiment: "exp-6", lift_se: "", p_value: "140%" }),
    ]);
    for (const row of [2, 3, 4, 5, 6]) expectError(errors, row, "p_value", /strictly between 0 and 1/);
  });

  it("a doubled percent sign or a decimal comma is not a number, and the message shows how to write it", async () => {
    const errors = await errorsOf([seRow({ lift: "1.2%%" }), seRow({ experiment: "exp-3", lift_se: "0,4" })]);
    expectError(errors, 2, "lift", /"1\.2%%" is not a number \(write e\.g\. 0\.012, -3\.5, 1e-4 or 1\.2%/);
    expectError(errors, 3, "lift_se", /"0,4" is not a number/);
  });

  it("missing estimate, a lift without uncertainty, and a standard error without its lift", async () => {
    const errors = await errorsOf([
      seRow({ lift: "", lift_se: "" }),
      seRow({ experiment: "exp-3", lift_se: "" }),
      seRow({ experiment: "exp-4", lift: "" }),
    ]);
    expectError(errors, 2, "lift", /missing estimate/);
    expectError(errors, 3, "lift", /needs its uncertainty/);
    expectError(errors, 4, "lift", /missing estimate: lift_se is given without lift/);
  });

  it("inconsistent columns: counts against lift, and lift_se against the counts, naming both", async () => {
    const errors = await errorsOf([
      countsRow({ lift: 0.3 }),
      countsRow({ experiment: "exp-3", lift_se: 0.05 }),
      seRow({ experiment: "exp-4", lift_ci_low: -0.05, lift_ci_high: 0.07 }),
    ]);
    expectError(errors, 2, "lift", /disagrees with the lift 0\.2 from the counts \(control_conversions/);
    expectError(
      errors,
      3,
      "lift_se",
      /lift_se gives a standard error of 0\.05, which disagrees with 0\.1534 from control_conversions/,
    );
    expectError(
      errors,
      4,
      "lift_ci_low",
      /lift_ci_low, lift_ci_high gives a standard error of 0\.03061, which disagrees with 0\.004 from lift_se/,
    );
  });

  it("bad dates: not YYYY-MM-DD, not a calendar day, ended_on before started_on", async () => {
    const errors = await errorsOf([
      countsRow({ started_on: "18/03/2024" }),
      countsRow({ experiment: "exp-3", ended_on: "2024-02-30" }),
      countsRow({ experiment: "exp-4", started_on: "2024-03-10", ended_on: "2024-03-01" }),
      countsRow({ experiment: "exp-5", decided_on: "March 2024" }),
      countsRow({ experiment: "exp-6", started_on: "2023-02-29" }),
    ]);
    expectError(errors, 2, "started_on", /YYYY-MM-DD/);
    expectError(errors, 3, "ended_on", /not a day of the calendar/);
    expectError(errors, 4, "ended_on", /2024-03-01 is before started_on 2024-03-10/);
    expectError(errors, 5, "decided_on", /"March 2024" is not a date written YYYY-MM-DD/);
    // 2023 is not a leap year.
    expectError(errors, 6, "started_on", /"2023-02-29" is not a day of the calendar/);
  });

  it("inconsistent columns: means against lift, and p_value against lift_se", async () => {
    const means = {
      control_n: 100,
      treatment_n: 100,
      control_mean: 10,
      control_sd: 5,
      treatment_mean: 11,
      treatment_sd: 5,
    };
    const errors = await errorsOf([
      seRow({ lift: "25%", lift_se: "", ...means }),
      // lift 0.01 with p = 0.5 means s = 0.01 / 0.6745 = 0.01483, far from lift_se 0.004.
      seRow({ experiment: "exp-3", p_value: 0.5 }),
    ]);
    // 11 / 10 - 1 = 0.1 (worked by hand).
    expectError(errors, 2, "lift", /25% disagrees with the lift 0\.1 from the means/);
    expectError(
      errors,
      3,
      "p_value",
      /p_value gives a standard error of 0\.01483, which disagrees with 0\.004 from lift_se/,
    );
  });

  it("unknown metric_kind and direction; counts for a continuous metric", async () => {
    const errors = await errorsOf([
      countsRow({ metric_kind: "ratio" }),
      countsRow({ experiment: "exp-3", metric: "visits", direction: "up" }),
      countsRow({ experiment: "exp-4", metric: "basket", metric_kind: "continuous" }),
    ]);
    expectError(errors, 2, "metric_kind", /not one of binary, continuous/);
    expectError(errors, 3, "direction", /not one of increase, decrease/);
    expectError(errors, 4, "control_conversions", /metric_kind is "continuous"/);
  });

  it("booleans other than true/false, yes/no, 1/0", async () => {
    const errors = await errorsOf([countsRow({ is_aa: "maybe", stopped_early: "Yes", primary: "TRUE" })]);
    expectError(errors, 2, "is_aa", /not a yes\/no value/);
    expect(errors.filter((error) => error.column === "stopped_early" || error.column === "primary")).toEqual(
      [],
    );
  });

  it("duplicate experiment x metric rows, naming both rows, also when not adjacent", async () => {
    expectError(
      await errorsOf([countsRow(), countsRow({ name: "" })]),
      3,
      "metric",
      /appear twice, on rows 2 and 3/,
    );
    expectError(
      await errorsOf([countsRow(), seRow(), countsRow({ experiment: "exp-1", treatment_conversions: 130 })]),
      4,
      "metric",
      /experiment "exp-1" and metric "signup_rate" appear twice, on rows 2 and 4/,
    );
    // A repeated primary row is a duplicate, not a second primary: one error, not two.
    const repeated = await errorsOf([countsRow({ primary: "yes" }), countsRow({ primary: "yes" })]);
    expect(repeated.map((error) => [error.row, error.column])).toEqual([[3, "metric"]]);
  });

  it("duplicate rows in a realized-measurements file, naming both rows", async () => {
    expect((await context.run(toCsv([countsRow()]))).outcome).toBe("applied");
    const holdout = {
      experiment: "exp-1",
      metric: "signup_rate",
      realized_lift: 0.01,
      realized_se: 0.01,
      method: "holdout",
    };
    const report = await context.run(toCsv([holdout, { ...holdout, realized_lift: 0.02 }]), {
      kind: "realized",
    });
    expect(report.outcome).toBe("rejected");
    expectError(report.errors, 3, "method", /method holdout appear twice, on rows 2 and 3/);
    expect((await context.snapshot()).realized).toEqual([]);
  });

  it("experiment-level columns that disagree across its metric rows, naming both rows", async () => {
    const errors = await errorsOf([
      countsRow({ primary: "yes" }),
      seRow({ experiment: "exp-1", decision: "not_shipped", started_on: "2024-01-08" }),
    ]);
    expectError(errors, 3, "decision", /"not_shipped" disagrees with row 2 \("shipped"\)/);
    expect(errors.some((error) => error.column === "started_on")).toBe(false);
  });

  it("no primary among several metrics, or two primaries", async () => {
    const none = await errorsOf([countsRow(), seRow({ experiment: "exp-1" })]);
    expectError(none, 2, "primary", /none is marked primary/);
    const two = await errorsOf([countsRow({ primary: 1 }), seRow({ experiment: "exp-1", primary: 1 })]);
    expectError(two, 3, "primary", /already has its primary metric on row 2/);
  });

  it("unknown and missing columns, not-a-number cells, a metric that would change kind", async () => {
    const header = await errorsOf([{ ...countsRow(), lift_sd: 0.1 }]);
    expectError(header, 1, "lift_sd", /unknown column/);
    const noMetric = await errorsOf([{ experiment: "exp-1", lift: 0.1, lift_se: 0.05 }]);
    expectError(noMetric, 1, "metric", /required column is missing/);
    const words = await errorsOf([seRow({ lift: "about 1%" })]);
    expectError(words, 2, "lift", /is not a number/);
    expect((await context.run(toCsv([countsRow()]))).outcome).toBe("applied");
    const changed = await errorsOf([
      countsRow({
        experiment: "exp-5",
        metric_kind: "continuous",
        control_conversions: "",
        treatment_conversions: "",
        control_mean: 1,
        treatment_mean: 1.1,
        control_sd: 1,
        treatment_sd: 1,
      }),
    ]);
    expectError(changed, 2, "metric_kind", /stored as binary; an import cannot change it/);
  });

  it("lists every error of the file at once, sorted by row, and logs the rejected import", async () => {
    const errors = await errorsOf([
      countsRow({ decision: "launched" }),
      countsRow({ experiment: "exp-3", control_n: -1 }),
      countsRow({ experiment: "exp-4" }),
      seRow({ experiment: "exp-5", p_value: 2, lift_se: "" }),
    ]);
    expect(errors.map((error) => [error.row, error.column])).toEqual([
      [2, "decision"],
      [3, "control_n"],
      [5, "p_value"],
    ]);
    const [entry] = (await importLog(context.db)).filter((log) => log.outcome === "rejected");
    expect(entry?.errors).toEqual(errors);
    expect(entry?.rowCount).toBe(4);
  });
});
