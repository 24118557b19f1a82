import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { csvTextCell, reviewCsv, reviewCsvColumns } from "../../src/report/review-csv.ts";
import { reviewHtml } from "../../src/report/review-html.ts";
import { type ReviewOutcome, runReview } from "../../src/review/run-review.ts";
import type { ReviewTestRow } from "../../src/stats/program-review.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedHistory } from "../review/seed-history.ts";

describe("CSV export of the per-test table", () => {
  // OWASP "CSV Injection": a cell starting with = + - @ tab or CR is run as a formula by spreadsheets.
  it.each([
    ['=HYPERLINK("http://x")', '"\'=HYPERLINK(""http://x"")"'],
    ["+1+2", "'+1+2"],
    ["-2+3+cmd|' /C calc'!A0", "'-2+3+cmd|' /C calc'!A0"],
    ["@SUM(A1)", "'@SUM(A1)"],
    ["\tindent", "'\tindent"],
    ["\rcarriage", '"\'\rcarriage"'],
    ["plain, with comma", '"plain, with comma"'],
    ["Checkout redesign", "Checkout redesign"],
  ])("escapes %j", (input, expected) => {
    expect(csvTextCell(input)).toBe(expected);
  });

  it("writes one row per test with the stated columns, numbers as numbers", () => {
    const row: ReviewTestRow = {
      key: "=cmd",
      name: "Guest checkout",
      team: "@team",
      quarter: "2026Q3",
      decision: "shipped",
      claimed: -0.0125,
      standardError: 0.004,
      z: -3.125,
      shrunk: -0.01,
      shrunkLower: -0.02,
      shrunkUpper: 0,
      probabilityRealWin: 0.01,
      probabilityFalseWin: 0.99,
      lfsr: 0.01,
      power: Number.NaN,
      exaggeration: Number.NaN,
      flags: ["early_stop"],
      realized: null,
      realizedStandardError: null,
    };
    const lines = reviewCsv([row]).trimEnd().split("\r\n");
    expect(lines[0]).toBe(reviewCsvColumns.join(","));
    expect(lines[1]).toBe(
      "'=cmd,Guest checkout,'@team,2026Q3,shipped,-0.0125,0.004,-3.125,-0.01,-0.02,0,0.01,0.99,0.01,,,early_stop,,",
    );
  });
});

describe("HTML report", () => {
  let handle: Awaited<ReturnType<typeof createTestDb>>;
  let outcome: ReviewOutcome;
  beforeAll(async () => {
    handle = await createTestDb();
    const { workspaceId } = await seedHistory(
      handle.db,
      "quillfern",
      generateDemo({ seed: 4, experiments: 300 }).truth.experiments,
    );
    outcome = await runReview(
      handle.db,
      workspaceId,
      { filters: { family: "conversion" }, priorFamily: "skewed" },
      { includeTests: true },
    );
  }, 120_000);
  afterAll(() => handle.dispose());

  it("is self-contained: inline SVG charts, no scripts, no external resources", async () => {
    const html = await reviewHtml(outcome.summary, outcome.tests ?? [], {
      workspaceName: "quillfern <demo>",
      generatedAt: "2026-10-01T00:00:00Z",
    });
    expect(html.startsWith("<!doctype html>")).toBe(true);
    expect((html.match(/<svg/g) ?? []).length).toBeGreaterThanOrEqual(5);
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/<link/i);
    expect(html).not.toMatch(/(src|href)\s*=\s*["']?https?:/i);
    expect(html).toContain("quillfern &lt;demo&gt;");
    expect(html).toContain("do not replace a statistician");
    expect(html).toContain("Not for clinical or safety-critical decisions.");
    expect(html).toContain("Caliper test");
  }, 60_000);
});
