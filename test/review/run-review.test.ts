import { and, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import {
  computationCache,
  dataVersions,
  experiments,
  metrics,
  results,
  reviews,
  workspaces,
} from "../../src/db/schema.ts";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { quarterOf, quarterRange, resolveFilters } from "../../src/review/review-filters.ts";
import { fitsFromJson, fitsToJson, type ReviewFits } from "../../src/review/review-fits.ts";
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

describe("cached prior fits", () => {
  const cacheKinds = async () =>
    (await handle.db.select({ kind: computationCache.kind }).from(computationCache)).map((row) => row.kind);
  const clearCache = async (kind?: string) => {
    if (kind) await handle.db.delete(computationCache).where(eq(computationCache.kind, kind));
    else await handle.db.delete(computationCache);
  };
  const reviewWithProgress = async (request: Parameters<typeof runReview>[2], includeTests = false) => {
    const messages: string[] = [];
    const outcome = await runReview(handle.db, workspaceId, request, {
      includeTests,
      onProgress: (message) => messages.push(message),
    });
    return { outcome, messages };
  };

  it("are reused by reviews that differ only in filters or thresholds, with the same figures as fresh fits", async () => {
    await clearCache();
    const request = { filters: { family: "conversion" }, delta: 0.002, bootstrap: 30 };
    const fresh = await reviewWithProgress(request);
    expect(fresh.messages.some((message) => message.startsWith("fitting the prior"))).toBe(true);
    expect(await cacheKinds()).toContain("review-fits");
    // The per-test table is only stored when asked for.
    expect(await cacheKinds()).not.toContain("review-tests");

    // Same settings from cached fits (the review entry dropped): the very same summary.
    await clearCache("review");
    const fromCachedFits = await reviewWithProgress(request);
    expect(fromCachedFits.outcome.cached).toBe(false);
    expect(fromCachedFits.messages.some((message) => message.startsWith("reusing the prior"))).toBe(true);
    expect(fromCachedFits.messages.some((message) => message.startsWith("fitting the prior"))).toBe(false);
    expect(fromCachedFits.outcome.summary).toEqual(fresh.outcome.summary);

    // Another threshold and team: no refit; the prior figures are those of the whole family.
    const team = demo.truth.experiments.find((row) => row.isPrimary && row.family === "conversion")
      ?.team as string;
    const other = await reviewWithProgress({
      ...request,
      delta: 0.004,
      filters: { family: "conversion", team },
    });
    expect(other.messages.some((message) => message.startsWith("fitting the prior"))).toBe(false);
    expect(other.outcome.summary.prior.logLik).toBe(fresh.outcome.summary.prior.logLik);

    // The per-test table asked for after its summary: computed from the cached fits, then stored.
    const withTests = await reviewWithProgress(request, true);
    expect(withTests.outcome.cached).toBe(false);
    expect(withTests.messages.some((message) => message.startsWith("fitting the prior"))).toBe(false);
    expect(withTests.outcome.tests?.length).toBe(fresh.outcome.summary.counts.included);
    expect(await cacheKinds()).toContain("review-tests");
    const again = await reviewWithProgress(request, true);
    expect(again.outcome.cached).toBe(true);
    expect(again.outcome.tests).toEqual(withTests.outcome.tests);
  }, 120_000);

  it("are refitted when the fit settings change", async () => {
    const base = { filters: { family: "conversion" }, bootstrap: 0 };
    await reviewWithProgress(base);
    for (const change of [
      { nullWeight: 3 },
      { priorFamily: "symmetric" as const },
      { seed: 5, bootstrap: 10 },
    ]) {
      const changed = await reviewWithProgress({ ...base, ...change });
      expect(changed.messages.some((message) => message.startsWith("fitting the prior"))).toBe(true);
    }
  }, 120_000);

  it("keep an explicitly asked number of refits apart from the default one", async () => {
    await clearCache();
    const byDefault = await runReview(handle.db, workspaceId, { filters: { family: "conversion" } });
    const asked = await runReview(handle.db, workspaceId, {
      filters: { family: "conversion" },
      bootstrap: 100,
    });
    // Below the large-history threshold both mean 100 refits, but they are separate entries.
    expect(asked.cached).toBe(false);
    expect(asked.cacheKey).not.toBe(byDefault.cacheKey);
    expect(asked.summary.assumptions.bootstrapRefits).toBe(byDefault.summary.assumptions.bootstrapRefits);
  }, 120_000);

  it("round-trip through their cache text exactly, typed arrays and non-finite numbers included", () => {
    const fits = {
      fit: {
        family: "symmetric",
        prior: { family: "symmetric", components: [{ component: { kind: "point", at: 0 }, weight: 1 }] },
        logLik: Number.NEGATIVE_INFINITY,
        penalizedLogLik: -0,
        iterations: 3,
        converged: false,
        optimalityGap: Number.NaN,
        grid: [{ kind: "normal", mean: 0, scale: 0.1 + 0.2 }],
        componentWeights: Float64Array.from([0.1, 1 / 3, Number.POSITIVE_INFINITY, -0, 5e-324]),
        nullWeight: 10,
        observationCount: 7,
      },
      alternatives: [],
      bootstrapPriors: [],
      gridRowCoarse: true,
      lowered: false,
    } as unknown as ReviewFits;
    const back = fitsFromJson(fitsToJson(fits));
    expect(back.fit.componentWeights).toBeInstanceOf(Float64Array);
    expect(Array.from(back.fit.componentWeights)).toEqual(Array.from(fits.fit.componentWeights));
    expect(Object.is(back.fit.componentWeights[3], -0)).toBe(true);
    expect(back.fit.logLik).toBe(Number.NEGATIVE_INFINITY);
    expect(Object.is(back.fit.penalizedLogLik, -0)).toBe(true);
    expect(back.fit.optimalityGap).toBeNaN();
    expect(back).toEqual(fits);
  });
});

describe("a review without a family", () => {
  it("is the review of the family with most primary results, by name: one cache entry for both", async () => {
    const unnamed = await runReview(handle.db, workspaceId, { seed: 41 });
    const family = unnamed.summary.metricFamily;
    const most = [...unnamed.summary.families].sort((a, b) => b.tests - a.tests)[0]?.family;
    expect(family).toBe(most);
    expect(unnamed.summary.settings.filters.family).toBe(family);
    const named = await runReview(handle.db, workspaceId, { filters: { family }, seed: 41 });
    expect(named.cached).toBe(true);
    expect(named.cacheKey).toBe(unnamed.cacheKey);
    expect(named.summary).toEqual(unnamed.summary);
  }, 120_000);
});

describe("the prior fits' cache", () => {
  it("survives a write that leaves the fitted observations as they were, and not one that changes them", async () => {
    const request = { filters: { family: "conversion" }, seed: 43 };
    await runReview(handle.db, workspaceId, request);
    const [experiment] = await handle.db
      .select({ id: experiments.id, name: experiments.name })
      .from(experiments)
      .where(eq(experiments.workspaceId, workspaceId))
      .limit(1);
    await handle.db
      .update(experiments)
      .set({ name: `${experiment?.name} (renamed)` })
      .where(eq(experiments.id, experiment?.id as number));
    const progress: string[] = [];
    const renamed = await runReview(handle.db, workspaceId, request, {
      onProgress: (message) => progress.push(message),
    });
    // A new data version: the review is computed again, on the cached fits.
    expect(renamed.cached).toBe(false);
    expect(progress.some((message) => message.startsWith("reusing the prior"))).toBe(true);
    // An included test of the family: primary, not A/A, no sample ratio mismatch.
    const [result] = await handle.db
      .select({ id: results.id, lift: results.lift })
      .from(results)
      .innerJoin(experiments, eq(results.experimentId, experiments.id))
      .innerJoin(metrics, eq(results.metricId, metrics.id))
      .where(
        and(
          eq(experiments.workspaceId, workspaceId),
          eq(metrics.family, "conversion"),
          eq(results.isPrimary, true),
          eq(results.srmFlagged, false),
          eq(experiments.isAa, false),
        ),
      )
      .limit(1);
    await handle.db
      .update(results)
      .set({ lift: (result?.lift as number) + 0.001 })
      .where(eq(results.id, result?.id as number));
    const refitted: string[] = [];
    await runReview(handle.db, workspaceId, request, { onProgress: (message) => refitted.push(message) });
    expect(refitted.some((message) => message.startsWith("fitting the prior"))).toBe(true);
  }, 120_000);
});
