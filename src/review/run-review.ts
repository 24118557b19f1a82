/**
 * Runs the program review of a workspace: reads the family's stored history, fits the prior of true
 * effects to the included tests (every family, for the sensitivity table), computes the pure review
 * (src/stats/program-review.ts) over the filtered tests, and caches the result by settings and data.
 * A second identical request on unchanged data is served from the cache (`cached: true`).
 */
import type { Database } from "../db/client.ts";
import { StatsInputError } from "../stats/errors.ts";
import { type FitFamily, observationColumns } from "../stats/fit-effect-prior.ts";
import { defaultThetaGridPointCount } from "../stats/prior-grid.ts";
import { type ProgramReview, programReview, type ReviewTestRow } from "../stats/program-review.ts";
import { createRandom } from "../stats/random.ts";
import { posteriorColumnsOnThreadsNow, probabilityAboveOnThreadsNow } from "../threads/posterior-threads.ts";
import { posteriorSumsOnThreads } from "../threads/sums-threads.ts";
import { pauseForRequests } from "./pause-for-requests.ts";
import { defaultReviewFamily, familyCountsAt, readReviewData } from "./read-review-data.ts";
import {
  cacheHas,
  readCache,
  readCacheText,
  reviewCacheKey,
  reviewCacheKind,
  reviewFitsCacheKey,
  reviewFitsCacheKind,
  reviewTestsCacheKind,
  storedDataVersion,
  testsCacheKey,
  writeCache,
} from "./review-cache.ts";
import { type ReviewFilters, resolveFilters } from "./review-filters.ts";
import {
  defaultBootstrapRefits,
  type FitSettings,
  fitReviewPriors,
  fitsFromJson,
  fitsToJson,
  largeHistoryBootstrapRefits,
  largeHistoryGridPoints,
  largeHistoryTests,
  type ReviewFits,
} from "./review-fits.ts";

export interface ReviewRequest {
  readonly filters?: ReviewFilters;
  /** Threshold for a false win (default 0). */
  readonly delta?: number;
  /** Practical threshold also reported (default none). */
  readonly practicalThreshold?: number | null;
  /** Two-sided level of the launch rule (default 0.05). */
  readonly alpha?: number;
  /** Caliper half-width as a share of the critical z (default 0.1). */
  readonly caliperWidth?: number;
  /** Null penalty of the prior fit (default: the fit's own default). */
  readonly nullWeight?: number;
  /** Prior family (default "auto": the better of symmetric and skewed by likelihood). */
  readonly priorFamily?: FitFamily | "auto";
  /** Bootstrap refits of the prior behind the intervals of program figures (default 100; 0 = none). */
  readonly bootstrap?: number;
  /** Seed of every random draw of the review (default 1). */
  readonly seed?: number;
}

/** The settings a review ran with, resolved (stored with every saved review). */
export interface ReviewSettings {
  readonly filters: ReviewFilters;
  readonly delta: number;
  readonly practicalThreshold: number | null;
  readonly alpha: number;
  readonly caliperWidth: number;
  readonly nullWeight: number | null;
  readonly priorFamily: FitFamily | "auto";
  readonly bootstrap: number;
  readonly seed: number;
}

/** The review as served: the program review without its per-test table, plus provenance. */
export type ReviewSummary = Omit<ProgramReview, "tests"> & {
  readonly settings: ReviewSettings;
  /** The metric family reviewed (the filter's, or the family with the most primary results). */
  readonly metricFamily: string;
  readonly dataFingerprint: string;
  readonly families: readonly { readonly family: string; readonly tests: number }[];
  readonly reviewedTests: number;
};

export interface ReviewOutcome {
  readonly summary: ReviewSummary;
  /** The per-test table when asked for. */
  readonly tests: readonly ReviewTestRow[] | null;
  readonly cached: boolean;
  readonly cacheKey: string;
}

export function resolveReviewSettings(request: ReviewRequest): ReviewSettings {
  const bootstrap = request.bootstrap ?? defaultBootstrapRefits;
  if (!Number.isInteger(bootstrap) || bootstrap < 0 || bootstrap > 2000) {
    throw new StatsInputError("bootstrap", "an integer from 0 to 2000", bootstrap);
  }
  return {
    filters: resolveFilters(request.filters ?? {}),
    delta: request.delta ?? 0,
    practicalThreshold: request.practicalThreshold ?? null,
    alpha: request.alpha ?? 0.05,
    caliperWidth: request.caliperWidth ?? 0.1,
    nullWeight: request.nullWeight ?? null,
    priorFamily: request.priorFamily ?? "auto",
    bootstrap,
    seed: request.seed ?? 1,
  };
}

/** What identifies a review: its resolved settings and its cache key on the data as stored now. */
export interface ReviewIdentity {
  readonly settings: ReviewSettings;
  /** Whether the refits were asked for: a default is lowered for a large history, an asked number is not. */
  readonly bootstrapAsked: boolean;
  /** Changes with the workspace's data version, so a write to its history makes a new key. */
  readonly cacheKey: string;
  /** The workspace's data version the key was made with. */
  readonly dataVersion: number;
}

export async function reviewIdentity(
  db: Database,
  workspaceId: number,
  request: ReviewRequest,
): Promise<ReviewIdentity> {
  const asked = resolveReviewSettings(request);
  const dataVersion = await storedDataVersion(db, workspaceId);
  // The family is always named: a request without one is the request for the default family (the
  // one with most primary results at this version), one cache entry and one computation for both.
  const family =
    asked.filters.family ?? defaultReviewFamily(await familyCountsAt(db, workspaceId, dataVersion));
  const settings =
    family === undefined || asked.filters.family !== undefined
      ? asked
      : { ...asked, filters: resolveFilters({ ...request.filters, family }) };
  const bootstrapAsked = request.bootstrap !== undefined;
  return {
    settings,
    bootstrapAsked,
    cacheKey: reviewCacheKey(workspaceId, { settings, bootstrapAsked }, dataVersion),
    dataVersion,
  };
}

/**
 * The review from the cache (with its table when asked for), or null when it must be computed.
 * `readTable: false` only checks that the table is cached (a large one is tens of megabytes) and
 * leaves `tests` null.
 */
export async function cachedReview(
  db: Database,
  identity: ReviewIdentity,
  includeTests: boolean,
  options: { readonly readTable?: boolean } = {},
): Promise<ReviewOutcome | null> {
  const { cacheKey } = identity;
  const summary = await readCache<ReviewSummary>(db, cacheKey, reviewCacheKind);
  if (!summary) return null;
  if (!includeTests) return { summary, tests: null, cached: true, cacheKey };
  const testsKey = testsCacheKey(cacheKey);
  if (options.readTable === false)
    return (await cacheHas(db, testsKey, reviewTestsCacheKind))
      ? { summary, tests: null, cached: true, cacheKey }
      : null;
  const tests = await readCache<ReviewTestRow[]>(db, testsKey, reviewTestsCacheKind);
  return tests ? { summary, tests, cached: true, cacheKey } : null;
}

export async function runReview(
  db: Database,
  workspaceId: number,
  request: ReviewRequest,
  options: { readonly includeTests?: boolean; readonly onProgress?: (message: string) => void } = {},
): Promise<ReviewOutcome> {
  const identity = await reviewIdentity(db, workspaceId, request);
  const { settings, bootstrapAsked, cacheKey } = identity;
  const progress = options.onProgress ?? (() => undefined);
  const cached = await cachedReview(db, identity, options.includeTests ?? false);
  if (cached) return cached;

  progress("reading the stored history");
  // At the identity's data version: a review of the same family at the same version (another
  // team, quarter or threshold) reuses the rows read (read-review-data.ts).
  const data = await readReviewData(db, workspaceId, settings.filters, identity.dataVersion);
  const included = data.familyTests.filter(
    (test) => !test.isAa && !test.sampleRatioMismatch && Number.isFinite(test.s) && test.s > 0,
  );
  if (included.length === 0) {
    throw new RangeError(
      `metric family "${data.family}" has no tests left to fit after leaving out A/A, mismatched and unmeasured ones`,
    );
  }
  const observations = included.map((test) => ({ y: test.y, s: test.s }));
  const fitSettings: FitSettings = {
    nullWeight: settings.nullWeight,
    priorFamily: settings.priorFamily,
    bootstrap: settings.bootstrap,
    bootstrapAsked,
    seed: settings.seed,
  };
  const fitsKey = reviewFitsCacheKey(workspaceId, observationColumns(observations), fitSettings);
  const cachedFits = await readCacheText(db, fitsKey, reviewFitsCacheKind);
  let fits: ReviewFits;
  if (cachedFits !== null) {
    progress(`reusing the prior fitted to these ${included.length} tests of "${data.family}"`);
    fits = fitsFromJson(cachedFits);
  } else {
    progress(`fitting the prior to ${included.length} tests of "${data.family}"`);
    await pauseForRequests();
    fits = await fitReviewPriors(observations, fitSettings, progress);
    await writeCache(db, workspaceId, [
      { cacheKey: fitsKey, kind: reviewFitsCacheKind, json: fitsToJson(fits) },
    ]);
  }
  const { fit, alternatives, bootstrapPriors, gridRowCoarse, lowered } = fits;
  progress("computing the review");
  await pauseForRequests();
  const review = programReview({
    tests: data.reviewedTests,
    fit,
    alternativeFits: alternatives,
    bootstrapPriors,
    random: createRandom(settings.seed),
    // The table only when asked for: the summary is the same without it.
    includeTests: options.includeTests ?? false,
    // Large histories share the per-test posteriors and program sums with the helper thread.
    kernels: {
      posteriorColumns: posteriorColumnsOnThreadsNow,
      posteriorSums: posteriorSumsOnThreads,
      probabilityAbove: probabilityAboveOnThreadsNow,
    },
    settings: {
      delta: settings.delta,
      practicalThreshold: settings.practicalThreshold,
      alpha: settings.alpha,
      caliperWidth: settings.caliperWidth,
    },
    extraAssumptions: [
      `Metric family "${data.family}": primary results only; the prior is fitted to all ${included.length} included tests of the family, the review covers the ${data.reviewedTests.length} tests that pass the filters${describeFilters(settings.filters)}.`,
      "Realized measurements: a holdout is preferred to a re-test, and a re-test to a post-launch read, when a test has several.",
      ...(gridRowCoarse
        ? [
            `Sensitivity: the history has ${included.length} included tests (more than ${largeHistoryTests}), so the grid family's row is fitted on ${largeHistoryGridPoints} grid points instead of the default ${defaultThetaGridPointCount(included.length)} (its log-likelihood can be slightly lower than on the finer grid).`,
          ]
        : []),
      ...(lowered
        ? [
            `Bootstrap refits: the history has ${included.length} included tests (more than ${largeHistoryTests}), so the default of ${defaultBootstrapRefits} refits is lowered to ${largeHistoryBootstrapRefits} to keep the review fast; intervals from ${largeHistoryBootstrapRefits} refits have less precise ends. Ask for bootstrap=${defaultBootstrapRefits} to get the full number.`,
          ]
        : []),
    ],
  });
  const { tests, ...rest } = review;
  const summary: ReviewSummary = {
    ...rest,
    settings,
    metricFamily: data.family,
    dataFingerprint: data.fingerprint,
    families: data.families,
    reviewedTests: data.reviewedTests.length,
  };
  // Serialized once for the cache; what is returned is parsed back from the same text, so that a
  // fresh result and a cached one are the same document (NaN -> null).
  const summaryJson = JSON.stringify(summary);
  // The per-test table (about 500 bytes a test) is serialized and stored only when asked for:
  // for a large history that costs more than the summary's whole computation.
  const testsJson = options.includeTests ? JSON.stringify(tests) : null;
  await writeCache(db, workspaceId, [
    { cacheKey, kind: reviewCacheKind, json: summaryJson },
    ...(testsJson !== null
      ? [{ cacheKey: testsCacheKey(cacheKey), kind: reviewTestsCacheKind, json: testsJson }]
      : []),
  ]);
  // The table is parsed back only when a caller reads it: the background preparation never does
  // (for 1e5 tests that saves half a second and some hundred megabytes).
  let parsedTests: ReviewTestRow[] | null | undefined;
  return {
    summary: JSON.parse(summaryJson) as ReviewSummary,
    get tests() {
      parsedTests ??= testsJson !== null ? (JSON.parse(testsJson) as ReviewTestRow[]) : null;
      return parsedTests;
    },
    cached: false,
    cacheKey,
  };
}

function describeFilters(filters: ReviewFilters): string {
  const parts: string[] = [];
  if (filters.team) parts.push(`team ${filters.team}`);
  if (filters.quarter) parts.push(`quarter ${filters.quarter}`);
  else if (filters.from || filters.to) parts.push(`dated ${filters.from ?? "any"} to ${filters.to ?? "any"}`);
  return parts.length > 0 ? ` (${parts.join(", ")})` : "";
}
