/**
 * The background preparer computes a workspace's default review of every metric family at its
 * first check and, after a write, once the history has held still for a check, so that the review
 * page's first request reads the cache whichever family it shows, and a review of one team fits no
 * prior; it prepares each version once, and again after a write.
 */
import { eq, sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { apiReviewRuns } from "../../src/api/routes/review.ts";
import { experiments } from "../../src/db/schema.ts";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { readFamilyCounts } from "../../src/review/read-review-data.ts";
import { startReviewPreparer } from "../../src/review/review-preparer.ts";
import { startReviewRun } from "../../src/review/review-runs.ts";
import { runReview } from "../../src/review/run-review.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedHistory } from "./seed-history.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let workspaceId: number;

beforeAll(async () => {
  handle = await createTestDb();
  ({ workspaceId } = await seedHistory(
    handle.db,
    "fernhollow",
    generateDemo({ seed: 9, experiments: 200 }).truth.experiments,
  ));
}, 60_000);
afterAll(() => handle.dispose());

describe("startReviewPreparer", () => {
  it("prepares the default review at the first check, once a version, and after a write once it held still", async () => {
    const runs = apiReviewRuns(() => undefined);
    const prepared: { version: number; computed: boolean; reviews: number }[] = [];
    // A long interval: the test drives the checks itself.
    const preparer = startReviewPreparer({
      db: handle.db,
      runs,
      intervalMilliseconds: 3_600_000,
      settleMilliseconds: 20,
      onPrepared: (_workspace, version, computed, reviews) => prepared.push({ version, computed, reviews }),
    });
    try {
      // The first check (a server just started) prepares at once.
      await preparer.check();
      expect(prepared).toHaveLength(1);
      expect(prepared[0]?.computed).toBe(true);
      // What the review page asks for first (no settings, with the table) now reads the cache.
      const page = await startReviewRun(handle.db, runs, workspaceId, {}, true);
      expect(page.run.state).toBe("ready");
      expect(page.run.cached).toBe(true);
      expect((await runReview(handle.db, workspaceId, {}, { includeTests: true })).cached).toBe(true);
      // Every family: its review (as the page's family menu asks for it) is cached too.
      const families = await readFamilyCounts(handle.db, workspaceId);
      expect(families.length).toBeGreaterThan(1);
      expect(prepared[0]?.reviews).toBe(families.length);
      for (const { family } of families) {
        const review = await runReview(
          handle.db,
          workspaceId,
          { filters: { family } },
          { includeTests: true },
        );
        expect(review.cached).toBe(true);
        expect(review.summary.metricFamily).toBe(family);
      }
      // A review of one team of a prepared family fits nothing: its prior fits are cached.
      const family = families[0]?.family as string;
      const [teamRow] = await handle.db
        .select({ team: experiments.team })
        .from(experiments)
        .where(eq(experiments.workspaceId, workspaceId))
        .limit(1);
      const progress: string[] = [];
      const byTeam = await runReview(
        handle.db,
        workspaceId,
        { filters: { family, team: teamRow?.team as string } },
        { onProgress: (message) => progress.push(message) },
      );
      expect(byTeam.cached).toBe(false);
      expect(progress.some((message) => message.startsWith("reusing the prior"))).toBe(true);
      expect(progress.some((message) => message.startsWith("fitting"))).toBe(false);
      await preparer.check();
      expect(prepared).toHaveLength(1);

      // A write bumps the data version: seen at one check, prepared at the next.
      const [first] = await handle.db
        .select({ id: experiments.id })
        .from(experiments)
        .where(eq(experiments.workspaceId, workspaceId))
        .limit(1);
      await handle.db
        .update(experiments)
        .set({ name: sql`${experiments.name} || ' (renamed)'` })
        .where(eq(experiments.id, first?.id as number));
      await preparer.check();
      expect(prepared).toHaveLength(1);
      await preparer.check();
      expect(prepared).toHaveLength(2);
      expect(prepared[1]?.version).toBeGreaterThan(prepared[0]?.version as number);
      expect(prepared[1]?.computed).toBe(true);

      // After a write through the API the server calls soon(workspace): once writes settle, one
      // check prepares the changed version without seeing it twice. Two writes in a row prepare once.
      for (const suffix of [" (again)", " (and again)"]) {
        await handle.db
          .update(experiments)
          .set({ name: sql`${experiments.name} || ${suffix}` })
          .where(eq(experiments.id, first?.id as number));
        void preparer.soon(workspaceId);
      }
      await preparer.soon(workspaceId);
      expect(prepared).toHaveLength(3);
      expect(prepared[2]?.version).toBeGreaterThan(prepared[1]?.version as number);
      expect(prepared[2]?.computed).toBe(true);
      expect((await runReview(handle.db, workspaceId, {}, { includeTests: true })).cached).toBe(true);
    } finally {
      preparer.stop();
    }
  }, 120_000);

  it("settles a pending soon() when stopped, and ignores soon() after", async () => {
    const runs = apiReviewRuns(() => undefined);
    const prepared: number[] = [];
    const preparer = startReviewPreparer({
      db: handle.db,
      runs,
      intervalMilliseconds: 3_600_000,
      settleMilliseconds: 60_000,
      onPrepared: (_workspace, version) => prepared.push(version),
    });
    const pending = preparer.soon(workspaceId);
    preparer.stop();
    await pending;
    await preparer.soon(workspaceId);
    expect(prepared).toEqual([]);
  });
});
