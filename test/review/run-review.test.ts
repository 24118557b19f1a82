import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { dataVersions, experiments, results, reviews, workspaces } from "../../src/db/schema.ts";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { quarterOf, quarterRange, resolveFilters } from "../../src/review/review-filters.ts";
import { runReview } from "../../src/review/run-review.ts";
import {
  compareReviews,
  listReviews,
  SavedReviewError,
  saveReview,
  showReview,
} from "../../src/review/saved-reviews.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedHistory } from "./seed-history.ts";

const demo = generateDemo({ seed: 3, experiments: 500 });
let handle: Awaited<ReturnType<typeof createTestDb>>;
let workspaceId: number;

beforeAll(async () => {
  handle = await createTestDb();
  ({ workspaceId } = await seedHistory(handle.db, "quillfern", demo.truth.experiments));
}, 60_000);
afterAll(() => handle.dispose());

describe("review filters", () => {
  it("maps dates to calendar quarters and back (common practice: Q1 = January to March)", () => {
    expect(quarterOf("2026-08-14")).toBe("2026Q3");
    expect(quarterOf("2026-01-01")).toBe("2026Q1");
    expect(quarterOf(null)).toBeNull();
    expect(quarterRange("2026Q4")).toEqual({ from: "2026-10-01", to: "2026-12-31" });
    expect(() => resolveFilters({ quarter: "2026Q5" })).toThrow(StatsInputError);
    expect(() => resolveFilters({ quarter: "2026Q1", from: "2026-01-01" })).toThrow(StatsInputError);
    expect(() => resolveFilters({ from: "2026-03-01", to: "2026-01-01" })).toThrow(StatsInputError);
  });
});

describe("data version triggers", () => {
  it("bump the workspace's version on every write and let a workspace be deleted", async () => {
    const { workspaceId: other } = await seedHistory(
      handle.db,
      "scratch",
      demo.truth.experiments.slice(0, 20),
    );
    const version = async (id: number) =>
      (await handle.db.select().from(dataVersions).where(eq(dataVersions.workspaceId, id)))[0]?.version ?? 0;
    const before = await version(other);
    expect(before).toBeGreaterThan(0);
    await handle.db.update(results).set({ liftSe: 0.5 }).where(eq(results.id, 1));
    await handle.db.update(experiments).set({ team: "Renamed" }).where(eq(experiments.workspaceId, other));
    expect(await version(other)).toBeGreaterThan(before);
    await handle.db.delete(workspaces).where(eq(workspaces.id, other));
    expect(await handle.db.select().from(dataVersions).where(eq(dataVersions.workspaceId, other))).toEqual(
      [],
    );
  });
});

describe("runReview on a stored workspace", () => {
  it("reads the family, fingerprints the data, and serves a second identical request from the cache", async () => {
    const first = await runReview(
      handle.db,
      workspaceId,
      { filters: { family: "conversion" } },
      { includeTests: true },
    );
    expect(first.cached).toBe(false);
    expect(["skewed", "symmetric"]).toContain(first.summary.priorFamily);
    expect(first.summary.metricFamily).toBe("conversion");
    expect(first.summary.dataFingerprint).toMatch(/^[0-9a-f]{64}$/);
    expect(first.tests?.length).toBe(first.summary.counts.included);
    const second = await runReview(
      handle.db,
      workspaceId,
      { filters: { family: "conversion" } },
      { includeTests: true },
    );
    expect(second.cached).toBe(true);
    expect(second.summary).toEqual(first.summary);
    expect(second.tests).toEqual(first.tests);
    // Different settings are a different entry.
    const other = await runReview(handle.db, workspaceId, {
      filters: { family: "conversion" },
      delta: 0.001,
    });
    expect(other.cached).toBe(false);
  }, 120_000);

  it("filters by team and quarter, fitting the prior to the whole family", async () => {
    const team = demo.truth.experiments.find((row) => row.isPrimary && row.family === "conversion")
      ?.team as string;
    const byTeam = await runReview(
      handle.db,
      workspaceId,
      { filters: { family: "conversion", team } },
      { includeTests: true },
    );
    expect(byTeam.tests?.every((row) => row.team === team)).toBe(true);
    expect(byTeam.summary.confusionMatrix.byTeam.map((row) => row.team)).toEqual([team]);
    const quarter = quarterOf(
      demo.truth.experiments.find((row) => row.isPrimary && row.family === "conversion")?.endedOn,
    ) as string;
    const byQuarter = await runReview(
      handle.db,
      workspaceId,
      { filters: { family: "conversion", quarter } },
      { includeTests: true },
    );
    expect(byQuarter.tests?.every((row) => row.quarter === quarter)).toBe(true);
    expect(byQuarter.summary.prior.logLik).toBe(byTeam.summary.prior.logLik);
  }, 120_000);

  it("saves immutable snapshots, lists, shows and compares them", async () => {
    const before = await runReview(
      handle.db,
      workspaceId,
      { filters: { family: "conversion" } },
      { includeTests: true },
    );
    const saved = await saveReview(
      handle.db,
      workspaceId,
      "2026Q3 close",
      before.summary,
      before.tests ?? [],
    );
    await expect(saveReview(handle.db, workspaceId, "2026Q3 close", before.summary, [])).rejects.toThrow(
      SavedReviewError,
    );

    // The data change (one decision reversed): a new review differs, the snapshot does not.
    const [shippedRow] = await handle.db
      .select({ id: experiments.id })
      .from(experiments)
      .where(eq(experiments.decision, "shipped"))
      .limit(1);
    await handle.db
      .update(experiments)
      .set({ decision: "not_shipped" })
      .where(eq(experiments.id, shippedRow?.id as number));
    const after = await runReview(
      handle.db,
      workspaceId,
      { filters: { family: "conversion" } },
      { includeTests: true },
    );
    expect(after.cached).toBe(false);
    expect(after.summary.dataFingerprint).not.toBe(before.summary.dataFingerprint);
    await saveReview(handle.db, workspaceId, "2026Q4 close", after.summary, after.tests ?? []);

    const reopened = await showReview(handle.db, workspaceId, "2026Q3 close");
    expect(reopened.summary).toEqual(saved.summary);
    expect(reopened.dataFingerprint).toBe(before.summary.dataFingerprint);
    const listing = await listReviews(handle.db, workspaceId);
    expect(listing.map((row) => row.label)).toEqual(["2026Q4 close", "2026Q3 close"]);

    const comparison = compareReviews(reopened, await showReview(handle.db, workspaceId, "2026Q4 close"));
    expect(comparison.sameData).toBe(false);
    const shipped = comparison.figures.find((row) => row.figure === "shipped");
    expect(shipped?.change).toBe(-1);
    const stored = await handle.db.select().from(reviews);
    expect(stored.length).toBe(2);
  }, 120_000);
});
