import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { importLimits } from "../../src/import/import-file.ts";
import { type Cells, countsRow, createImportTestDb, importLog, resultOf, toCsv } from "./import-helpers.ts";

let context: Awaited<ReturnType<typeof createImportTestDb>>;
beforeEach(async () => {
  context = await createImportTestDb();
});
afterEach(() => context.dispose());

/** A history of `count` experiments, each with a primary counts metric and a secondary SE metric. */
function history(count: number): Cells[] {
  const rows: Cells[] = [];
  for (let index = 0; index < count / 2; index += 1) {
    const experiment = `exp-${index}`;
    rows.push(countsRow({ experiment, primary: "yes", treatment_conversions: 100 + (index % 40) }));
    rows.push({
      experiment,
      metric: "revenue_per_user",
      metric_kind: "continuous",
      lift: "0.5%",
      lift_se: "0.4%",
      primary: "no",
    });
  }
  return rows;
}

describe("import: all or nothing, idempotent, dry run, limits, JSON", () => {
  it("writes nothing when one row in 1,000 is bad, and reports that row", async () => {
    const rows = history(1000);
    rows[736] = { ...rows[736], treatment_conversions: 5000 };
    const report = await context.run(toCsv(rows));
    expect(report.outcome).toBe("rejected");
    expect(report.rows).toBe(1000);
    // rows[736] is data row 737, CSV row 738 (the header is row 1).
    expect(report.errors).toEqual([
      {
        row: 738,
        column: "treatment_conversions",
        message:
          "5000 conversions exceed treatment_n 1000: an arm cannot convert more units than it has; check that the columns are not swapped and that the count is of converted units, not of events",
      },
    ]);
    const stored = await context.snapshot();
    expect(stored).toEqual({ metrics: [], experiments: [], results: [], realized: [] });
    expect((await importLog(context.db)).map((entry) => entry.outcome)).toEqual(["rejected"]);
  });

  it("leaves stored data exactly as it was when a file of 1,000 edits has one bad row", async () => {
    const rows = history(1000);
    await context.run(toCsv(rows));
    const before = await context.snapshot();
    const edited = rows.map((row, index) =>
      index % 2 === 0 ? { ...row, treatment_conversions: 150, decision: "not_shipped" } : row,
    );
    edited.push(countsRow({ experiment: "exp-new", primary: "yes" }));
    edited[998] = { ...edited[998], decision: "launched" };
    const report = await context.run(toCsv(edited));
    expect(report.outcome).toBe("rejected");
    expect(report.errors.map((error) => [error.row, error.column])).toEqual([[1000, "decision"]]);
    expect(await context.snapshot()).toEqual(before);
  });

  it("rolls back every write when the database refuses one insert midway through the transaction", async () => {
    // A real SQLite trigger makes the 900th result's insert fail after the experiments and the
    // earlier results were written in the same transaction.
    await context.client.execute(
      "CREATE TRIGGER refuse_one BEFORE INSERT ON results WHEN NEW.input LIKE '%\"exp-450\"%' BEGIN SELECT RAISE(ABORT, 'refused by test trigger'); END",
    );
    const failure = await context.run(toCsv(history(1000))).then(
      () => undefined,
      (error: unknown) => error as Error & { cause?: Error },
    );
    expect(failure?.cause?.message ?? failure?.message).toMatch(/refused by test trigger/);
    expect(await context.snapshot()).toEqual({ metrics: [], experiments: [], results: [], realized: [] });
    expect(await importLog(context.db)).toEqual([]);
  });

  it("imports 1,000 rows, then the same file again changes nothing", async () => {
    const content = toCsv(history(1000));
    const first = await context.run(content);
    expect([first.outcome, first.created, first.updated, first.unchanged]).toEqual(["applied", 1000, 0, 0]);
    const before = await context.snapshot();
    const second = await context.run(content);
    expect([second.outcome, second.created, second.updated, second.unchanged]).toEqual([
      "applied",
      0,
      0,
      1000,
    ]);
    expect(await context.snapshot()).toEqual(before);
    const log = await importLog(context.db);
    expect(log).toHaveLength(2);
    expect(log[0]?.contentHash).toMatch(/^[0-9a-f]{64}$/);
    expect(log[1]?.contentHash).toBe(log[0]?.contentHash);
    expect(log[1]?.unchanged).toBe(1000);
  });

  it("counts a file with its columns in another order as unchanged", async () => {
    const rows = history(20);
    await context.run(toCsv(rows));
    const before = await context.snapshot();
    const reordered = rows.map((row) => Object.fromEntries(Object.entries(row).reverse()));
    const report = await context.run(toCsv(reordered));
    expect([report.created, report.updated, report.unchanged]).toEqual([0, 0, 20]);
    expect(await context.snapshot()).toEqual(before);
  });

  it("dry run of an edited file reports the updates and writes none of them", async () => {
    const rows = history(10);
    await context.run(toCsv(rows));
    const before = await context.snapshot();
    rows[0] = { ...rows[0], treatment_conversions: 131 };
    const dry = await context.run(toCsv(rows), { dryRun: true });
    expect([dry.outcome, dry.created, dry.updated, dry.unchanged]).toEqual(["dry_run", 0, 1, 9]);
    expect(await context.snapshot()).toEqual(before);
  });

  it("updates an edited row and the rows of an experiment whose fields changed", async () => {
    const rows = history(6);
    await context.run(toCsv(rows));
    rows[2] = { ...rows[2], treatment_conversions: 130 };
    rows[4] = { ...rows[4], decision: "not_shipped" };
    const report = await context.run(toCsv(rows));
    // Row 2 (its result changed) and rows 4, 5 (their experiment's decision changed) are updated.
    expect([report.created, report.updated, report.unchanged]).toEqual([0, 3, 3]);
    expect((await resultOf(context.db, "exp-1", "signup_rate")).lift).toBeCloseTo(0.3, 12);
    const experiment = (await context.snapshot()).experiments.find((row) => row.key === "exp-2");
    expect(experiment?.decision).toBe("not_shipped");
    expect(experiment?.updatedAt).not.toBeNull();
  });

  it("moves the primary mark when a file names another primary", async () => {
    const rows = history(2);
    await context.run(toCsv(rows));
    const swapped = [
      { ...rows[0], primary: "no" },
      { ...rows[1], primary: "yes" },
    ];
    const report = await context.run(toCsv(swapped));
    expect(report.updated).toBe(2);
    expect((await resultOf(context.db, "exp-0", "signup_rate")).isPrimary).toBe(false);
    expect((await resultOf(context.db, "exp-0", "revenue_per_user")).isPrimary).toBe(true);
  });

  it("dry run: the same report, nothing written but a log entry", async () => {
    const content = toCsv(history(10));
    const dry = await context.run(content, { dryRun: true });
    expect([dry.outcome, dry.created, dry.updated, dry.unchanged]).toEqual(["dry_run", 10, 0, 0]);
    expect(await context.snapshot()).toEqual({ metrics: [], experiments: [], results: [], realized: [] });
    const applied = await context.run(content);
    expect({ ...applied, importId: 0, outcome: "dry_run" }).toEqual({ ...dry, importId: 0 });
    const log = await importLog(context.db);
    expect(log.map((entry) => [entry.outcome, entry.dryRun])).toEqual([
      ["dry_run", true],
      ["applied", false],
    ]);
    const badDry = await context.run(toCsv([countsRow({ control_n: -3 })]), { dryRun: true });
    expect(badDry.outcome).toBe("rejected");
    expect(badDry.errors).toHaveLength(1);
  });

  it("refuses a file over the size or row limit with a clear error", async () => {
    const big = `experiment,metric\n${"x".repeat(importLimits.maxBytes)}`;
    const tooBig = await context.run(big);
    expect(tooBig.outcome).toBe("rejected");
    expect(tooBig.errors[0]?.message).toMatch(/the limit is 10\.0 MB/);
    const manyRows = toCsv(
      Array.from({ length: importLimits.maxRows + 1 }, (_, index) => ({
        experiment: `e${index}`,
        metric: "m",
      })),
    );
    const tooMany = await context.run(manyRows);
    expect(tooMany.errors).toEqual([
      {
        row: 0,
        column: null,
        message: `the file has ${importLimits.maxRows + 1} rows; the limit is ${importLimits.maxRows}: split it into several files (each import is all or nothing)`,
      },
    ]);
  });

  it("reads JSON: an array of objects, row N is the N-th object, numbers and booleans allowed", async () => {
    const objects = [
      {
        experiment: "exp-j",
        metric: "signup_rate",
        metric_kind: "binary",
        control_n: 1000,
        treatment_n: 1000,
        control_conversions: 100,
        treatment_conversions: 120,
        is_aa: false,
      },
      { experiment: "exp-k", metric: "signup_rate", lift: "1.5%", lift_se: 0.006, primary: true },
    ];
    const report = await context.run(JSON.stringify(objects), { fileName: "history.json" });
    expect(report.errors).toEqual([]);
    expect(report.created).toBe(2);
    expect((await resultOf(context.db, "exp-j", "signup_rate")).input["control_n"]).toBe("1000");
    expect((await resultOf(context.db, "exp-k", "signup_rate")).lift).toBeCloseTo(0.015, 15);
    const bad = await context.run(
      JSON.stringify([objects[0], { ...objects[1], p_value: 7, lift_se: null }]),
      { fileName: null },
    );
    expect(bad.errors).toEqual([
      {
        row: 2,
        column: "p_value",
        message: "must be strictly between 0 and 1 (a p-value of 1 carries no information); got 7",
      },
    ]);
    const notArray = await context.run('{"experiment": "x"}', { fileName: "x.json" });
    expect(notArray.errors[0]?.message).toMatch(/array of objects/);
  });

  it("imports realized measurements against stored results, flipped for decrease metrics, idempotently", async () => {
    await context.run(
      toCsv([countsRow(), countsRow({ experiment: "exp-2", metric: "churn_rate", direction: "decrease" })]),
    );
    const realized = toCsv([
      {
        experiment: "exp-1",
        metric: "signup_rate",
        realized_lift: "4%",
        realized_se: "1.5%",
        method: "holdout",
        measured_on: "2024-05-01",
      },
      {
        experiment: "exp-2",
        metric: "churn_rate",
        realized_lift: -0.02,
        realized_se: 0.01,
        method: "retest",
      },
    ]);
    const report = await context.run(realized, { kind: "realized", fileName: "realized.csv" });
    expect([report.outcome, report.created]).toEqual(["applied", 2]);
    const stored = (await context.snapshot()).realized;
    expect(stored.map((row) => [row.estimate, row.standardError, row.method])).toEqual([
      [0.04, 0.015, "holdout"],
      [0.02, 0.01, "retest"],
    ]);
    const again = await context.run(realized, { kind: "realized", fileName: "realized.csv" });
    expect([again.created, again.updated, again.unchanged]).toEqual([0, 0, 2]);
    const edited = await context.run(realized.replace("4%", "3.5%"), { kind: "realized" });
    expect([edited.created, edited.updated, edited.unchanged]).toEqual([0, 1, 1]);
    const afterEdit = (await context.snapshot()).realized;
    expect(afterEdit.map((row) => row.estimate)).toEqual([0.035, 0.02]);
    expect(afterEdit[0]?.updatedAt).not.toBeNull();
    const bad = await context.run(
      toCsv([
        {
          experiment: "exp-404",
          metric: "signup_rate",
          realized_lift: 0.01,
          realized_se: 0.01,
          method: "holdout",
        },
        { experiment: "exp-1", metric: "signup_rate", realized_lift: 0.01, realized_se: -1, method: "guess" },
      ]),
      { kind: "realized" },
    );
    expect(bad.errors.map((error) => [error.row, error.column])).toEqual([
      [2, "experiment"],
      [3, "realized_se"],
      [3, "method"],
    ]);
  });
});
