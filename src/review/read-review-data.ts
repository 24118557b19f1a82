/**
 * Reads a workspace's stored history for a review: the primary results of one metric family,
 * with their experiments and any realized measurement, and a fingerprint of exactly what was read
 * (SHA-256 over the rows in id order), so that a cached or saved review can say which data it saw.
 */
import { createHash } from "node:crypto";
import { and, asc, eq, sql } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments, metrics, realizedMeasurements, results } from "../db/schema.ts";
import type { ReviewTest } from "../stats/program-review.ts";
import { matchesFilters, quarterOf, type ReviewFilters, testDate } from "./review-filters.ts";

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

export async function readReviewData(
  db: Database,
  workspaceId: number,
  filters: ReviewFilters,
): Promise<ReviewData> {
  const familyCounts = await db
    .select({ family: metrics.family, tests: sql<number>`count(*)` })
    .from(results)
    .innerJoin(metrics, eq(results.metricId, metrics.id))
    .where(and(eq(metrics.workspaceId, workspaceId), eq(results.isPrimary, true)))
    .groupBy(metrics.family)
    .orderBy(asc(metrics.family));
  const families = familyCounts.map((row) => ({ family: row.family, tests: Number(row.tests) }));
  if (families.length === 0) throw new ReviewDataError("the workspace has no primary results to review");
  const family =
    filters.family ??
    [...families].sort((a, b) => b.tests - a.tests || a.family.localeCompare(b.family))[0]?.family;
  if (!family || !families.some((row) => row.family === family)) {
    throw new ReviewDataError(
      `no primary results in metric family "${filters.family}"; families: ${families.map((row) => row.family).join(", ")}`,
    );
  }
  const rows = await readFamilyRows(db, workspaceId, family);
  const realizedRows = await db
    .select({
      id: realizedMeasurements.id,
      experimentId: realizedMeasurements.experimentId,
      metricId: realizedMeasurements.metricId,
      estimate: realizedMeasurements.estimate,
      standardError: realizedMeasurements.standardError,
      method: realizedMeasurements.method,
    })
    .from(realizedMeasurements)
    .innerJoin(metrics, eq(realizedMeasurements.metricId, metrics.id))
    .where(and(eq(metrics.workspaceId, workspaceId), eq(metrics.family, family)))
    .orderBy(asc(realizedMeasurements.id));
  const realizedByResult = new Map<string, (typeof realizedRows)[number]>();
  for (const row of realizedRows) {
    const key = `${row.experimentId}:${row.metricId}`;
    const current = realizedByResult.get(key);
    if (!current || (methodPreference[row.method] ?? 9) < (methodPreference[current.method] ?? 9)) {
      realizedByResult.set(key, row);
    }
  }

  const hash = createHash("sha256");
  hash.update(`family:${family}\n`);
  const familyTests: ReviewTest[] = [];
  const reviewedTests: ReviewTest[] = [];
  for (const row of rows) {
    const realized = realizedByResult.get(`${row.experimentId}:${row.metricId}`) ?? null;
    const date = testDate(row);
    const test: ReviewTest = {
      key: row.key,
      name: row.name,
      team: row.team,
      quarter: quarterOf(date),
      decision: row.decision,
      y: row.lift,
      s: row.liftSe,
      isAa: row.isAa,
      sampleRatioMismatch: row.srmFlagged,
      stoppedEarly: row.stoppedEarly,
      realized: realized
        ? { estimate: realized.estimate, standardError: realized.standardError, method: realized.method }
        : null,
    };
    // Every field the review uses goes into the fingerprint, in a fixed order.
    hash.update(
      `${row.resultId}\t${row.key}\t${row.name}\t${row.team ?? ""}\t${date ?? ""}\t${row.decision}\t${row.lift}\t${row.liftSe}\t${row.isAa ? 1 : 0}\t${row.srmFlagged ? 1 : 0}\t${row.stoppedEarly ? 1 : 0}\t${realized ? `${realized.id}:${realized.estimate}:${realized.standardError}:${realized.method}` : ""}\n`,
    );
    familyTests.push(test);
    if (matchesFilters({ team: row.team, date }, filters)) reviewedTests.push(test);
  }
  return { family, families, familyTests, reviewedTests, fingerprint: hash.digest("hex") };
}

interface FamilyRow {
  readonly resultId: number;
  readonly lift: number;
  readonly liftSe: number;
  readonly srmFlagged: boolean;
  readonly key: string;
  readonly name: string;
  readonly team: string | null;
  readonly startedOn: string | null;
  readonly endedOn: string | null;
  readonly decidedOn: string | null;
  readonly decision: ReviewTest["decision"];
  readonly isAa: boolean;
  readonly stoppedEarly: boolean;
  readonly experimentId: number;
  readonly metricId: number;
}

/**
 * The family's primary results with their experiments, in result id order. SQLite builds one JSON
 * array of all rows, which is parsed at once: a row at a time through the driver costs several
 * times more for a large history. Reals go through printf('%!.17g'): 17 significant digits give
 * back the very same double (the '!' flag lifts SQLite's usual 15-digit limit), where JSON's own
 * rendering of a real would round it.
 */
async function readFamilyRows(db: Database, workspaceId: number, family: string): Promise<FamilyRow[]> {
  const [answer] = await db.all<{ rows: string | null }>(sql`
    select json_group_array(json_array(
      ${results.id}, printf('%!.17g', ${results.lift}), printf('%!.17g', ${results.liftSe}),
      ${results.srmFlagged}, ${experiments.key}, ${experiments.name}, ${experiments.team},
      ${experiments.startedOn}, ${experiments.endedOn}, ${experiments.decidedOn},
      ${experiments.decision}, ${experiments.isAa}, ${experiments.stoppedEarly},
      ${experiments.id}, ${metrics.id}
    )) as rows
    from ${results}
    inner join ${experiments} on ${results.experimentId} = ${experiments.id}
    inner join ${metrics} on ${results.metricId} = ${metrics.id}
    where ${metrics.workspaceId} = ${workspaceId} and ${metrics.family} = ${family}
      and ${results.isPrimary} = 1`);
  const parsed = JSON.parse(answer?.rows ?? "[]") as unknown[][];
  const rows = parsed.map(
    (cells): FamilyRow => ({
      resultId: cells[0] as number,
      lift: storedReal(cells[1]),
      liftSe: storedReal(cells[2]),
      srmFlagged: cells[3] === 1,
      key: cells[4] as string,
      name: cells[5] as string,
      team: cells[6] as string | null,
      startedOn: cells[7] as string | null,
      endedOn: cells[8] as string | null,
      decidedOn: cells[9] as string | null,
      decision: cells[10] as ReviewTest["decision"],
      isAa: cells[11] === 1,
      stoppedEarly: cells[12] === 1,
      experimentId: cells[13] as number,
      metricId: cells[14] as number,
    }),
  );
  return rows.sort((a, b) => a.resultId - b.resultId);
}

/** A real as printed by SQLite's printf('%!.17g'), back to the double it was. */
function storedReal(text: unknown): number {
  if (text === "Inf") return Number.POSITIVE_INFINITY;
  if (text === "-Inf") return Number.NEGATIVE_INFINITY;
  return Number(text);
}
