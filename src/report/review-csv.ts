/**
 * The per-test table of a review as CSV (RFC 4180 quoting). Text cells that a spreadsheet would
 * run as a formula (starting with = + - @, tab or carriage return) get a leading apostrophe
 * (OWASP, "CSV Injection"). Numeric cells are written by plumbline from finite numbers and are plain
 * numbers (a leading minus there is a sign, which spreadsheets read as a number, not a formula);
 * missing values are empty cells.
 */
import type { ReviewTestRow } from "../stats/program-review.ts";

const formulaStart = /^[=+\-@\t\r]/;

/** Escapes one text cell: formula neutralising, then RFC 4180 quoting. */
export function csvTextCell(value: string): string {
  const neutral = formulaStart.test(value) ? `'${value}` : value;
  return /[",\r\n]/.test(neutral) ? `"${neutral.replaceAll('"', '""')}"` : neutral;
}

function numberCell(value: number | null | undefined): string {
  return typeof value === "number" && Number.isFinite(value) ? String(value) : "";
}

export const reviewCsvColumns = [
  "key",
  "name",
  "team",
  "quarter",
  "decision",
  "claimed_lift",
  "standard_error",
  "z",
  "shrunk_lift",
  "shrunk_lower",
  "shrunk_upper",
  "prob_real_win",
  "prob_false_win",
  "lfsr",
  "power_at_typical_win",
  "exaggeration_at_typical_win",
  "flags",
  "realized_lift",
  "realized_se",
] as const;

export function reviewCsv(rows: readonly ReviewTestRow[]): string {
  const lines = [reviewCsvColumns.join(",")];
  for (const row of rows) {
    lines.push(
      [
        csvTextCell(row.key),
        csvTextCell(row.name),
        csvTextCell(row.team ?? ""),
        csvTextCell(row.quarter ?? ""),
        csvTextCell(row.decision),
        numberCell(row.claimed),
        numberCell(row.standardError),
        numberCell(row.z),
        numberCell(row.shrunk),
        numberCell(row.shrunkLower),
        numberCell(row.shrunkUpper),
        numberCell(row.probabilityRealWin),
        numberCell(row.probabilityFalseWin),
        numberCell(row.lfsr),
        numberCell(row.power),
        numberCell(row.exaggeration),
        csvTextCell(row.flags.join(";")),
        numberCell(row.realized),
        numberCell(row.realizedStandardError),
      ].join(","),
    );
  }
  return `${lines.join("\r\n")}\r\n`;
}
