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

/**
 * readFamilyCounts at a data version, remembered per database (the last few versions): a review's
 * identity names its family (the default one when none is asked for), so even a request answered
 * from the cache needs it, and the history cannot have changed while the version is the same.
 */
const familyCountsRemembered = new WeakMap<
  Database,
  Map<string, Promise<{ readonly family: string; readonly tests: number }[]>>
>();
const familyCountsKept = 64;

export function familyCountsAt(
  db: Database,
  workspaceId: number,
  dataVersion: number,
): Promise<{ readonly family: string; readonly tests: number }[]> {
  const remembered = mapOf(familyCountsRemembered, db);
  const key = `${workspaceId}:${dataVersion}`;
  const found = remembered.get(key);
  if (found) return found;
  const counts = readFamilyCounts(db, workspaceId);
  remembered.set(key, counts);
  const held = remembered;
  counts.catch(() => {
    if (held.get(key) === counts) held.delete(key);
  });
  // Oldest first in a Map: drop beyond the bound.
  for (const oldKey of held.keys()) {
    if (held.size <= familyCountsKept) break;
    held.delete(oldKey);
  }
  return counts;
}

/** A database's own map in a per-database memo (made on first use). */
function mapOf<K, V>(memo: WeakMap<Database, Map<K, V>>, db: Database): Map<K, V> {
  let map = memo.get(db);
  if (!map) {
    map = new Map();
    memo.set(db, map);
  }
  return map;
}

/** The family a review without a family filter covers: the one with most primary results. */
export function defaultReviewFamily(
  families: readonly { readonly family: string; readonly tests: number }[],
): string | undefined {
  return [...families].sort((a, b) => b.tests - a.tests || a.family.localeCompare(b.family))[0]?.family;
}

/**
 * The review's data: the family's rows (read once per data version when `dataVersion` is given,
 * see rememberedRead) and the ones that pass the team and date filters.
 */
export async function readReviewData(
  db: Database,
  workspaceId: number,
  filters: ReviewFilters,
  dataVersion?: number,
): Promise<ReviewData> {
  const data =
    dataVersion === undefined
      ? await readFamilyData(db, workspaceId, filters.family, await readFamilyCounts(db, workspaceId))
      : await rememberedRead(db, workspaceId, dataVersion, filters.family);
  const filtered = filters.team !== undefined || filters.from !== undefined || filters.to !== undefined;
  const reviewedTests = filtered
    ? data.familyTests.filter((test, index) =>
        matchesFilters({ team: test.team, date: data.dates[index] ?? null }, filters),
      )
    : data.familyTests;
  return {
    family: data.family,
    families: data.families,
    familyTests: data.familyTests,
    reviewedTests,
    fingerprint: data.fingerprint,
  };
}

/** A family's rows as read, before the filters; `dates` are the tests' dates, by index. */
interface FamilyData {
  readonly family: string;
  readonly families: readonly { readonly family: string; readonly tests: number }[];
  readonly familyTests: readonly ReviewTest[];
  readonly dates: readonly (string | null)[];
  readonly fingerprint: string;
}

/**
 * The last reads of each database, by workspace, data version and family (the default family
 * resolved): a workspace's data version changes with every write to its history (database
 * triggers, schema.ts), so a read at the same version is the same rows. The quarterly review flips
 * through teams and quarters of one family; each would read the whole family again (0.3 to 0.6 s
 * at 1e5 tests) without it. A read at a newer version drops the workspace's older ones (they
 * cannot be asked for again), and at most rememberedTestsKept tests are kept in all, newest used
 * first.
 */
interface RememberedRead {
  readonly workspaceId: number;
  readonly dataVersion: number;
  tests: number;
  readonly data: Promise<FamilyData>;
}
const rememberedReads = new WeakMap<Database, Map<string, RememberedRead>>();
export const rememberedTestsKept = 250_000;

async function rememberedRead(
  db: Database,
  workspaceId: number,
  dataVersion: number,
  familyAsked: string | undefined,
): Promise<FamilyData> {
  const families = await familyCountsAt(db, workspaceId, dataVersion);
  const family = familyAsked ?? defaultReviewFamily(families);
  const reads = mapOf(rememberedReads, db);
  const key = JSON.stringify([workspaceId, dataVersion, family ?? null]);
  const found = reads.get(key);
  if (found) {
    // Newest used last: a read used again moves to the end.
    reads.delete(key);
    reads.set(key, found);
    return found.data;
  }
  const entry: RememberedRead = {
    workspaceId,
    dataVersion,
    tests: 0,
    data: readFamilyData(db, workspaceId, family, families),
  };
  for (const [otherKey, other] of reads)
    if (other.workspaceId === workspaceId && other.dataVersion < dataVersion) reads.delete(otherKey);
  reads.set(key, entry);
  const held = reads;
  entry.data.then(
    (data) => {
      if (held.get(key) !== entry) return;
      entry.tests = data.familyTests.length;
      // Drop the least recently used reads beyond the bound (a read larger than it is not kept).
      let total = 0;
      for (const [otherKey, other] of [...held.entries()].reverse()) {
        total += other.tests;
        if (total > rememberedTestsKept) held.delete(otherKey);
      }
    },
    () => {
      if (held.get(key) === entry) held.delete(key);
    },
  );
  return entry.data;
}

async function readFamilyData(
  db: Database,
  workspaceId: number,
  familyAsked: string | undefined,
  families: readonly { readonly family: string; readonly tests: number }[],
): Promise<FamilyData> {
  if (families.length === 0) throw new ReviewDataError("the workspace has no primary results to review");
  const family = familyAsked ?? defaultReviewFamily(families);
  if (!family || !families.some((row) => row.family === family)) {
    throw new ReviewDataError(
      `no primary results in metric family "${familyAsked}"; families: ${families.map((row) => row.family).join(", ")}`,
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
  const dates: (string | null)[] = [];
  // One pass over the parsed rows (cells in the order of readFamilyRowsText's json_array).
  for (const cells of JSON.parse(rowsText) as unknown[][]) {
    const realized =
      realizedByResult.size > 0 ? (realizedByResult.get(`${cells[11]}:${cells[12]}`) ?? null) : null;
    const date = cells[7] as string | null;
    familyTests.push({
      key: cells[4] as string,
      name: cells[5] as string,
      team: cells[6] as string | null,
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
    });
    dates.push(date);
  }
  return { family, families, familyTests, dates, fingerprint };
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
