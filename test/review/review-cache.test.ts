/**
 * The review cache keeps only a workspace's newest entries of each kind (common practice for
 * caches of large, recomputable values: bounded by count, and per-test tables also by size), and
 * leaves other workspaces' and other kinds' entries alone.
 */
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { computationCache, workspaces } from "../../src/db/schema.ts";
import {
  cacheLimits,
  keptTestTables,
  readCache,
  reviewCacheKind,
  reviewFitsCacheKind,
  reviewTestsCacheKind,
  writeCache,
} from "../../src/review/review-cache.ts";
import { createTestDb } from "../helpers/db.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let first: number;
let second: number;

beforeAll(async () => {
  handle = await createTestDb();
  const inserted = await handle.db
    .insert(workspaces)
    .values([{ name: "first" }, { name: "second" }])
    .returning({ id: workspaces.id });
  first = inserted[0]?.id as number;
  second = inserted[1]?.id as number;
});
afterAll(() => handle.dispose());

describe("review cache", () => {
  it("keeps the newest per-test tables of a workspace and the summaries within their own bound", async () => {
    await writeCache(handle.db, second, [
      { cacheKey: "other:tests", kind: reviewTestsCacheKind, json: "[1]" },
    ]);
    for (let index = 0; index < keptTestTables + 3; index++) {
      await writeCache(handle.db, first, [
        { cacheKey: `key-${index}`, kind: reviewCacheKind, json: JSON.stringify({ index }) },
        { cacheKey: `key-${index}:tests`, kind: reviewTestsCacheKind, json: JSON.stringify([index]) },
      ]);
    }
    const tables = await handle.db
      .select({ cacheKey: computationCache.cacheKey })
      .from(computationCache)
      .where(eq(computationCache.kind, reviewTestsCacheKind));
    const kept = tables.map((row) => row.cacheKey).sort();
    const expected = Array.from({ length: keptTestTables }, (_, offset) => `key-${offset + 3}:tests`);
    expect(kept).toEqual([...expected, "other:tests"].sort());
    // Summaries stay, and a kept table reads back as written.
    for (let index = 0; index < keptTestTables + 3; index++)
      expect(await readCache(handle.db, `key-${index}`, reviewCacheKind)).toEqual({ index });
    expect(await readCache(handle.db, `key-${keptTestTables + 2}:tests`, reviewTestsCacheKind)).toEqual([
      keptTestTables + 2,
    ]);
    // Rewriting an old kept entry keeps it (an upsert keeps its place).
    await writeCache(handle.db, first, [
      { cacheKey: "key-3:tests", kind: reviewTestsCacheKind, json: "[33]" },
    ]);
    expect(await readCache(handle.db, "key-3:tests", reviewTestsCacheKind)).toEqual([33]);
  });

  it("bounds tables by their total size, always keeping the newest, and summaries by count", async () => {
    const [workspace] = await handle.db
      .insert(workspaces)
      .values({ name: "bounded" })
      .returning({ id: workspaces.id });
    const id = workspace?.id as number;
    const limits = {
      ...cacheLimits,
      [reviewTestsCacheKind]: { entries: 10, bytes: 2500 },
      [reviewCacheKind]: { entries: 3, bytes: Number.MAX_SAFE_INTEGER },
    };
    const table = (index: number) => JSON.stringify([index, "x".repeat(1000)]);
    for (let index = 0; index < 5; index++)
      await writeCache(
        handle.db,
        id,
        [
          { cacheKey: `b-${index}`, kind: reviewCacheKind, json: JSON.stringify({ index }) },
          { cacheKey: `b-${index}:tests`, kind: reviewTestsCacheKind, json: table(index) },
        ],
        limits,
      );
    const keys = async (kind: string) =>
      (
        await handle.db
          .select({ cacheKey: computationCache.cacheKey, workspaceId: computationCache.workspaceId })
          .from(computationCache)
          .where(eq(computationCache.kind, kind))
      )
        .filter((row) => row.workspaceId === id)
        .map((row) => row.cacheKey)
        .sort();
    // About 1,010 bytes a table: two fit in 2,500 bytes.
    expect(await keys(reviewTestsCacheKind)).toEqual(["b-3:tests", "b-4:tests"]);
    expect(await keys(reviewCacheKind)).toEqual(["b-2", "b-3", "b-4"]);
    // A table larger than the bound alone is still kept (the newest always is).
    await writeCache(
      handle.db,
      id,
      [{ cacheKey: "huge:tests", kind: reviewTestsCacheKind, json: JSON.stringify(["y".repeat(5000)]) }],
      limits,
    );
    expect(await keys(reviewTestsCacheKind)).toEqual(["huge:tests"]);
    // An entry rewritten in place keeps its first-write place, and is kept by the write itself even
    // when it is older than another entry and now over the bound.
    for (const key of ["first:tests", "second:tests"])
      await writeCache(
        handle.db,
        id,
        [{ cacheKey: key, kind: reviewTestsCacheKind, json: table(7) }],
        limits,
      );
    expect(await keys(reviewTestsCacheKind)).toEqual(["first:tests", "second:tests"]);
    await writeCache(
      handle.db,
      id,
      [{ cacheKey: "first:tests", kind: reviewTestsCacheKind, json: JSON.stringify(["z".repeat(5000)]) }],
      limits,
    );
    expect(await keys(reviewTestsCacheKind)).toEqual(["first:tests", "second:tests"]);
    expect(await readCache(handle.db, "first:tests", reviewTestsCacheKind)).toEqual(["z".repeat(5000)]);
    // Kinds not written are left alone, and so are other workspaces' entries.
    await writeCache(handle.db, id, [{ cacheKey: "fits-1", kind: reviewFitsCacheKind, json: "{}" }], limits);
    expect(await keys(reviewCacheKind)).toEqual(["b-2", "b-3", "b-4"]);
    expect(await readCache(handle.db, "other:tests", reviewTestsCacheKind)).toEqual([1]);
  });
});
