/**
 * The review cache (table computation_cache). An entry is keyed by SHA-256 of the workspace, its
 * data version (bumped by triggers on any write to its history) and the review settings, so a
 * second identical request on unchanged data is answered from the cache without reading the
 * history again; the entry carries the SHA-256 fingerprint of the rows it was computed from. The
 * summary and the per-test table are two entries, so the summary is served without the table.
 */
import { createHash } from "node:crypto";
import { and, eq, sql } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { computationCache, dataVersions } from "../db/schema.ts";

export const reviewCacheKind = "review";
export const reviewTestsCacheKind = "review-tests";
export const reviewFitsCacheKind = "review-fits";

/**
 * The workspace's data version: a counter that database triggers bump on every write to its
 * metrics, experiments, results and realized measurements (schema.ts, dataVersions), so that a
 * cached review is validated with one primary-key read instead of re-reading the history.
 */
export async function storedDataVersion(db: Database, workspaceId: number): Promise<number> {
  const [row] = await db
    .select({ version: dataVersions.version })
    .from(dataVersions)
    .where(eq(dataVersions.workspaceId, workspaceId));
  return row?.version ?? 0;
}

export function reviewCacheKey(workspaceId: number, settings: unknown, dataVersion: number): string {
  return createHash("sha256")
    .update(`review:v2\nworkspace ${workspaceId}\ndata version ${dataVersion}\n${JSON.stringify(settings)}`)
    .digest("hex");
}

/** The key of a review's per-test table (cache_key is the table's primary key: it gets its own). */
export function testsCacheKey(reviewKey: string): string {
  return `${reviewKey}:tests`;
}

/**
 * The key of a review's prior fits (review-fits.ts): the workspace, the observations fitted (every
 * (y, s) pair of the family's included tests, in order, bit for bit: all the fits read) and the
 * fit settings; not the data version, so that writes that leave the fitted observations as they
 * were (other families, names, teams, dates, decisions, realized measurements) keep the fits valid.
 */
export function reviewFitsCacheKey(
  workspaceId: number,
  observations: { readonly y: Float64Array; readonly s: Float64Array },
  fitSettings: unknown,
): string {
  return createHash("sha256")
    .update(`review-fits:v2\nworkspace ${workspaceId}\n${JSON.stringify(fitSettings)}\n`)
    .update(new Uint8Array(observations.y.buffer, observations.y.byteOffset, observations.y.byteLength))
    .update(new Uint8Array(observations.s.buffer, observations.s.byteOffset, observations.s.byteLength))
    .digest("hex");
}

/** An entry's stored JSON text as it is (for values with their own decoding), or null. */
export async function readCacheText(db: Database, cacheKey: string, kind: string): Promise<string | null> {
  const [row] = await db
    .select({ value: sql<string>`${computationCache.value}` })
    .from(computationCache)
    .where(and(eq(computationCache.cacheKey, cacheKey), eq(computationCache.kind, kind)));
  return row ? row.value : null;
}

/** Whether an entry is cached, without reading its value. */
export async function cacheHas(db: Database, cacheKey: string, kind: string): Promise<boolean> {
  const [row] = await db
    .select({ one: sql<number>`1` })
    .from(computationCache)
    .where(and(eq(computationCache.cacheKey, cacheKey), eq(computationCache.kind, kind)));
  return row !== undefined;
}

export async function readCache<T>(db: Database, cacheKey: string, kind: string): Promise<T | null> {
  const [row] = await db
    .select({ value: computationCache.value })
    .from(computationCache)
    .where(and(eq(computationCache.cacheKey, cacheKey), eq(computationCache.kind, kind)));
  return row ? (row.value as T) : null;
}

/**
 * Writes entries given as JSON text: the caller serializes once (a large per-test table costs as
 * much to stringify as to compute), and the text is bound as it is rather than through the json
 * column's own stringify.
 */
export async function writeCache(
  db: Database,
  workspaceId: number,
  entries: readonly { cacheKey: string; kind: string; json: string }[],
  limits: CacheLimits = cacheLimits,
): Promise<void> {
  await db.transaction(async (tx) => {
    for (const entry of entries) {
      const value = sql`${entry.json}`;
      await tx
        .insert(computationCache)
        .values({ cacheKey: entry.cacheKey, workspaceId, kind: entry.kind, value })
        .onConflictDoUpdate({ target: computationCache.cacheKey, set: { value, kind: entry.kind } });
    }
    // Each kind written keeps only the workspace's newest entries (by first write: an upsert keeps
    // its place), so that a history written again and again does not grow the cache without end;
    // the entries just written are never the ones dropped.
    for (const kind of new Set(entries.map((entry) => entry.kind))) {
      const limit = limits[kind];
      if (!limit) continue;
      const written = sql.join(
        entries.filter((entry) => entry.kind === kind).map((entry) => sql`${entry.cacheKey}`),
        sql`, `,
      );
      await tx.run(sql`
        delete from ${computationCache}
        where rowid in (
          select rowid from (
            select rowid,
              row_number() over (order by rowid desc) as newness,
              sum(octet_length(${computationCache.value})) over (order by rowid desc) as bytes
            from ${computationCache}
            where ${computationCache.workspaceId} = ${workspaceId} and ${computationCache.kind} = ${kind})
          where newness > 1 and (newness > ${limit.entries} or bytes > ${limit.bytes}))
          and ${computationCache.cacheKey} not in (${written})`);
    }
  });
}

/**
 * What a workspace keeps of each kind: the newest `entries` entries (by first write) while their
 * total stays within `bytes`; the newest one and the ones just written are always kept. Per-test tables are large (about 500 bytes a
 * test) and cheap to recompute from cached fits: a few, within 256 MiB, enough for the preparer's
 * reviews of every family of a history of 1e5 tests (review-preparer.ts). Summaries (some ten
 * kilobytes) and fits (some tens) are bounded by count (common practice for caches of
 * recomputable values).
 */
export type CacheLimits = Readonly<Record<string, { readonly entries: number; readonly bytes: number }>>;

export const cacheLimits: CacheLimits = {
  [reviewTestsCacheKind]: { entries: 16, bytes: 256 * 1024 * 1024 },
  [reviewCacheKind]: { entries: 256, bytes: Number.MAX_SAFE_INTEGER },
  [reviewFitsCacheKind]: { entries: 64, bytes: Number.MAX_SAFE_INTEGER },
};

/** Per-test tables kept per workspace at most (the newest written; fewer when they are large). */
export const keptTestTables = cacheLimits[reviewTestsCacheKind]?.entries as number;
