/**
 * Which stored tests a review covers: a metric family, optionally one team, and a date range
 * given either as --from/--to (inclusive ISO dates) or as a calendar quarter ("2026Q3").
 * A test's date is the day it was decided, else the day it ended, else the day it started.
 */
import { StatsInputError } from "../stats/errors.ts";

export interface ReviewFilters {
  readonly family?: string;
  readonly team?: string;
  /** Inclusive, YYYY-MM-DD. */
  readonly from?: string;
  /** Inclusive, YYYY-MM-DD. */
  readonly to?: string;
  /** e.g. "2026Q3"; exclusive with from/to. */
  readonly quarter?: string;
}

const isoDate = /^\d{4}-(0[1-9]|1[0-2])-(0[1-9]|[12]\d|3[01])$/;
const quarterPattern = /^(\d{4})Q([1-4])$/;

/** "2026-08-14" -> "2026Q3"; null for a missing or malformed date. */
export function quarterOf(date: string | null | undefined): string | null {
  if (!date || !isoDate.test(date.slice(0, 10))) return null;
  const month = Number(date.slice(5, 7));
  return `${date.slice(0, 4)}Q${Math.floor((month - 1) / 3) + 1}`;
}

/** The first and last day of a quarter label. */
export function quarterRange(quarter: string): { from: string; to: string } {
  const match = quarterPattern.exec(quarter);
  if (!match) throw new StatsInputError("quarter", 'a quarter such as "2026Q3"', quarter);
  const year = match[1] as string;
  const index = Number(match[2]);
  const lastDays = ["03-31", "06-30", "09-30", "12-31"];
  const firstMonth = String((index - 1) * 3 + 1).padStart(2, "0");
  return { from: `${year}-${firstMonth}-01`, to: `${year}-${lastDays[index - 1]}` };
}

/** Validates filters and resolves a quarter into its date range. */
export function resolveFilters(filters: ReviewFilters): ReviewFilters {
  if (filters.quarter && (filters.from || filters.to)) {
    throw new StatsInputError("quarter", "used without from/to", filters.quarter);
  }
  for (const key of ["from", "to"] as const) {
    const value = filters[key];
    if (value !== undefined && !isoDate.test(value))
      throw new StatsInputError(key, "a date YYYY-MM-DD", value);
  }
  if (filters.from && filters.to && filters.from > filters.to) {
    throw new StatsInputError("from", `on or before to (${filters.to})`, filters.from);
  }
  const range = filters.quarter ? quarterRange(filters.quarter) : null;
  return {
    ...(filters.family ? { family: filters.family } : {}),
    ...(filters.team ? { team: filters.team } : {}),
    ...(range ? { from: range.from, to: range.to, quarter: filters.quarter } : {}),
    ...(!range && filters.from ? { from: filters.from } : {}),
    ...(!range && filters.to ? { to: filters.to } : {}),
  };
}

/** The date a test is filed under for ranges and quarters. */
export function testDate(dates: {
  decidedOn: string | null;
  endedOn: string | null;
  startedOn: string | null;
}): string | null {
  return dates.decidedOn ?? dates.endedOn ?? dates.startedOn;
}

export function matchesFilters(
  test: { team: string | null; date: string | null },
  filters: ReviewFilters,
): boolean {
  if (filters.team !== undefined && test.team !== filters.team) return false;
  if (filters.from !== undefined || filters.to !== undefined) {
    if (!test.date) return false;
    const day = test.date.slice(0, 10);
    if (filters.from !== undefined && day < filters.from) return false;
    if (filters.to !== undefined && day > filters.to) return false;
  }
  return true;
}
