/**
 * The review cache (table computation_cache). An entry is keyed by SHA-256 of the review settings
 * and a signature of the stored data, so a second identical request on unchanged data is answered
 * from the cache without reading the history again. The signature is one aggregate query over the
 * family's rows (counts, id sums, and id-weighted sums of every value the review reads): any insert,
 * delete or edit of a value changes it. The summary and the per-test table are stored as two
 * entries so that the summary is served without parsing the (large) table.
 */
import { createHash } from "node:crypto";
import { and, eq, sql } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { computationCache, experiments, metrics, realizedMeasurements, results } from "../db/schema.ts";

export const reviewCacheKind = "review";
export const reviewTestsCacheKind = "review-tests";

/** A cheap signature of the workspace's primary results and realized measurements (all families). */
export async function storedDataSignature(db: Database, workspaceId: number): Promise<string> {
  const [resultPart] = await db
    .select({
      count: sql<number>`count(*)`,
      ids: sql<number>`total(${results.id})`,
      values: sql<number>`total(${results.lift} * (${results.id} % 1009 + 1) + ${results.liftSe} * (${results.id} % 997 + 3))`,
      flags: sql<number>`total((${results.srmFlagged} + 2 * ${results.isPrimary} + 4 * ${experiments.isAa} + 8 * ${experiments.stoppedEarly}) * (${results.id} % 991 + 1))`,
      decisions: sql<number>`total(length(${experiments.decision}) * unicode(${experiments.decision}) * (${experiments.id} % 983 + 1))`,
      texts: sql<string>`max(coalesce(${experiments.updatedAt}, '')) || '|' || max(coalesce(${results.updatedAt}, '')) || '|' || total(length(coalesce(${experiments.team}, '')) * (${experiments.id} % 977 + 1) + length(${experiments.name}) + length(${experiments.key}) * 7) || '|' || total(unicode(coalesce(${experiments.team}, ' ')) * (${experiments.id} % 971 + 1))`,
      dates: sql<string>`total(length(coalesce(${experiments.decidedOn}, '')) + length(coalesce(${experiments.endedOn}, ''))) || '|' || max(coalesce(${experiments.decidedOn}, '')) || '|' || min(coalesce(${experiments.decidedOn}, '')) || '|' || total(cast(replace(coalesce(${experiments.decidedOn}, ${experiments.endedOn}, ${experiments.startedOn}, '0'), '-', '') as integer) % 100003 * (${experiments.id} % 967 + 1))`,
      families: sql<string>`total(length(${metrics.family}) * (${metrics.id} % 953 + 1))`,
    })
    .from(results)
    .innerJoin(experiments, eq(results.experimentId, experiments.id))
    .innerJoin(metrics, eq(results.metricId, metrics.id))
    .where(eq(experiments.workspaceId, workspaceId));
  const [realizedPart] = await db
    .select({
      count: sql<number>`count(*)`,
      ids: sql<number>`total(${realizedMeasurements.id})`,
      values: sql<number>`total(${realizedMeasurements.estimate} * (${realizedMeasurements.id} % 1009 + 1) + ${realizedMeasurements.standardError} * (${realizedMeasurements.id} % 997 + 3) + length(${realizedMeasurements.method}) * (${realizedMeasurements.id} % 991 + 1))`,
    })
    .from(realizedMeasurements)
    .innerJoin(metrics, eq(realizedMeasurements.metricId, metrics.id))
    .where(eq(metrics.workspaceId, workspaceId));
  return JSON.stringify([resultPart, realizedPart]);
}

export function reviewCacheKey(settings: unknown, signature: string): string {
  return createHash("sha256")
    .update(`review:v1\n${JSON.stringify(settings)}\n${signature}`)
    .digest("hex");
}

export async function readCache<T>(db: Database, cacheKey: string, kind: string): Promise<T | null> {
  const [row] = await db
    .select({ value: computationCache.value })
    .from(computationCache)
    .where(and(eq(computationCache.cacheKey, cacheKey), eq(computationCache.kind, kind)));
  return row ? (row.value as T) : null;
}

export async function writeCache(
  db: Database,
  workspaceId: number,
  entries: readonly { cacheKey: string; kind: string; value: unknown }[],
): Promise<void> {
  await db.transaction(async (tx) => {
    for (const entry of entries) {
      await tx
        .insert(computationCache)
        .values({ cacheKey: entry.cacheKey, workspaceId, kind: entry.kind, value: entry.value })
        .onConflictDoUpdate({
          target: computationCache.cacheKey,
          set: { value: entry.value, kind: entry.kind },
        });
    }
  });
}
