/**
 * Reads a workspace's stored history for a review: the primary results of one metric family,
 * with their experiments and any realized measurement, and a fingerprint of exactly what was read
 * (SHA-256 over the text of the rows read, in id order), so that a cached or saved review can say which data it saw.
 */
import { createHash } from "node:crypto";
import { and, asc, eq, sql } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments, metrics, realizedMeasurements, results } from "../db/schema.ts";
import type { ReviewTest } from "../stats/program-review.ts";
import { matchesFilters, quarterOf, type ReviewFilters } from "./review-filters.ts";

export interface ReviewData {
  readonly family: string;
  /** Every family with primary results in the workspace, with its count. */
  readonly families: readonly { readonly family: string; readonly tests: number }[];
  /** All primary results of the family (the prior is fitted to the included ones). */
  readonly familyTests: readonly ReviewTest[];
  /** The tests that pass the team and date filters (the ones reviewed). */
  readonly reviewedTests: readonly ReviewTest[];
  /** SHA-256 (hex) of the rows read. */
  readonly fingerprint: string;
}

export class ReviewDataError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "ReviewDataError";
  }
}

// Realized measurements: a holdout is the cleanest read of a shipped change, then a re-test.
const methodPreference: Record<string, number> = { holdout: 0, retest: 1, post_launch: 2 };

/** Every metric family with primary results in the workspace, with its count, by name. */
export async function readFamilyCounts(
  db: Database,
  workspaceId: number,
): Promise<{ readonly family: string; readonly tests: number }[]> {
  const familyCounts = await db
    .select({ family: metrics.family, tests: sql<number>`count(*)` })
    .from(results)
    .innerJoin(metrics, eq(results.metricId, metrics.id))
    .where(and(eq(metrics.workspaceId, workspaceId), eq(results.isPrimary, true)))
    .groupBy(metrics.family)
    .orderBy(asc(metrics.family));
  return familyCounts.map((row) => ({ family: row.family, tests: Number(row.tests) }));
}

/** The family a review without a family filter covers: the one with most primary results. */
export function defaultReviewFamily(
  families: readonly { readonly family: string; readonly tests: number }[],
): string | undefined {
  return [...families].sort((a, b) => b.tests - a.tests || a.family.localeCompare(b.family))[0]?.family;
}

export async function readReviewData(
  db: Database,
  workspaceId: number,
  filters: ReviewFilters,
): Promise<ReviewData> {
  const families = await readFamilyCounts(db, workspaceId);
  if (families.length === 0) throw new ReviewDataError("the workspace has no primary results to review");
  const family = filters.family ?? defaultReviewFamily(families);
  if (!family || !families.some((row) => row.family === family)) {
    throw new ReviewDataError(
      `no primary results in metric family "${filters.family}"; families: ${families.map((row) => row.family).join(", ")}`,
    );
  }
  const rowsText = await readFamilyRowsText(db, workspaceId, family);
  const realizedText = await readRealizedText(db, workspaceId, family);
  // The fingerprint covers the family and exactly the text read: every field the review uses, in
  // result id order (the rows' JSON as SQLite renders it, reals at 17 significant digits).
  const fingerprint = createHash("sha256")
    .update(`family:${family}\n`)
    .update(rowsText)
    .update("\n")
    .update(realizedText)
    .digest("hex");

  const realizedByResult = new Map<string, RealizedRow>();
  for (const cells of JSON.parse(realizedText) as unknown[][]) {
    const row: RealizedRow = {
      experimentId: cells[0] as number,
      metricId: cells[1] as number,
      estimate: storedReal(cells[2]),
      standardError: storedReal(cells[3]),
      method: cells[4] as string,
    };
    const key = `${row.experimentId}:${row.metricId}`;
    const current = realizedByResult.get(key);
    if (!current || (methodPreference[row.method] ?? 9) < (methodPreference[current.method] ?? 9)) {
      realizedByResult.set(key, row);
    }
  }

  const familyTests: ReviewTest[] = [];
  const reviewedTests: ReviewTest[] = [];
  const filtered = filters.team !== undefined || filters.from !== undefined || filters.to !== undefined;
  // One pass over the parsed rows (cells in the order of readFamilyRowsText's json_array).
  for (const cells of JSON.parse(rowsText) as unknown[][]) {
    const realized =
      realizedByResult.size > 0 ? (realizedByResult.get(`${cells[11]}:${cells[12]}`) ?? null) : null;
    const team = cells[6] as string | null;
    const date = cells[7] as string | null;
    const test: ReviewTest = {
      key: cells[4] as string,
      name: cells[5] as string,
      team,
      quarter: quarterOf(date),
      decision: cells[8] as ReviewTest["decision"],
      y: storedReal(cells[1]),
      s: storedReal(cells[2]),
      isAa: cells[9] === 1,
      sampleRatioMismatch: cells[3] === 1,
      stoppedEarly: cells[10] === 1,
      realized: realized
        ? { estimate: realized.estimate, standardError: realized.standardError, method: realized.method }
        : null,
    };
    familyTests.push(test);
    if (!filtered || matchesFilters({ team, date }, filters)) reviewedTests.push(test);
  }
  return { family, families, familyTests, reviewedTests, fingerprint };
}

interface RealizedRow {
  readonly experimentId: number;
  readonly metricId: number;
  readonly estimate: number;
  readonly standardError: number;
  readonly method: string;
}

/**
 * The family's primary results with their experiments as one JSON array text, in result id
 * order: SQLite builds it and it is parsed at once (a row at a time through the driver costs
 * several times more for a large history), and the same text is fingerprinted. Each row is
 * [result id, lift, lift SE, SRM flag, key, name, team, date, decision, A/A, stopped early,
 * experiment id, metric id], the date being testDate's (decided, else ended, else started). Reals
 * go through printf('%!.17g'): 17 significant digits give back the very same double (the '!' flag
 * lifts SQLite's usual 15-digit limit), where JSON's own rendering of a real would round it.
 */
async function readFamilyRowsText(db: Database, workspaceId: number, family: string): Promise<string> {
  const [answer] = await db.all<{ rows: string | null }>(sql`
    select json_group_array(json_array(
      ${results.id}, printf('%!.17g', ${results.lift}), printf('%!.17g', ${results.liftSe}),
      ${results.srmFlagged}, ${experiments.key}, ${experiments.name}, ${experiments.team},
      coalesce(${experiments.decidedOn}, ${experiments.endedOn}, ${experiments.startedOn}),
      ${experiments.decision}, ${experiments.isAa}, ${experiments.stoppedEarly},
      ${experiments.id}, ${metrics.id}
    ) order by ${results.id}) as rows
    from ${results}
    inner join ${experiments} on ${results.experimentId} = ${experiments.id}
    inner join ${metrics} on ${results.metricId} = ${metrics.id}
    where ${metrics.workspaceId} = ${workspaceId} and ${metrics.family} = ${family}
      and ${results.isPrimary} = 1`);
  return answer?.rows ?? "[]";
}

/** The family's realized measurements, [experiment id, metric id, estimate, SE, method], by id. */
async function readRealizedText(db: Database, workspaceId: number, family: string): Promise<string> {
  const [answer] = await db.all<{ rows: string | null }>(sql`
    select json_group_array(json_array(
      ${realizedMeasurements.experimentId}, ${realizedMeasurements.metricId},
      printf('%!.17g', ${realizedMeasurements.estimate}),
      printf('%!.17g', ${realizedMeasurements.standardError}), ${realizedMeasurements.method}
    ) order by ${realizedMeasurements.id}) as rows
    from ${realizedMeasurements}
    inner join ${metrics} on ${realizedMeasurements.metricId} = ${metrics.id}
    where ${metrics.workspaceId} = ${workspaceId} and ${metrics.family} = ${family}`);
  return answer?.rows ?? "[]";
}

/** A real as printed by SQLite's printf('%!.17g'), back to the double it was. */
function storedReal(text: unknown): number {
  if (text === "Inf") return Number.POSITIVE_INFINITY;
  if (text === "-Inf") return Number.NEGATIVE_INFINITY;
  return Number(text);
}
