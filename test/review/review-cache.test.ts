/**
 * The review cache keeps only a workspace's newest per-test tables (common practice for caches
 * of large, recomputable values: bounded by count), and leaves every other entry alone.
 */
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { computationCache, workspaces } from "../../src/db/schema.ts";
import {
  keptTestTables,
  readCache,
  reviewCacheKind,
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
  it("keeps the newest per-test tables of a workspace and every summary", async () => {
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
});
