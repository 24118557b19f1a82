/**
 * The prior fits behind a review: the chosen family's fit, the other families' fits (the
 * sensitivity rows) and the priors refitted to bootstrap resamples. They depend only on the
 * family's included tests and on the fit settings (null penalty, family, refits, seed), not on the
 * review's filters, thresholds, alpha or caliper, so run-review.ts caches them apart, keyed by the
 * fingerprint of the family's rows: a review of another team, quarter or threshold on unchanged
 * data fits nothing, and a per-test table asked for after its summary only recomputes the review.
 */

import type { EffectPrior } from "../stats/effect-prior.ts";
import {
  defaultNullWeight,
  type FamilyFit,
  type FitFamily,
  familyComponents,
  fitEffectPrior,
  fitOnMatrix,
  type Observation,
  observationColumns,
  type PriorFit,
  type SummaryData,
} from "../stats/fit-effect-prior.ts";
import { type LikelihoodMatrix, likelihoodMatrix } from "../stats/likelihood-matrix.ts";
import { thetaGridComponents } from "../stats/prior-grid.ts";
import { helperThread, sharedFloat64 } from "../threads/helper-thread.ts";
import { coarseGridOnHelper, refitsOnThreads } from "../threads/refit-threads.ts";
import { pauseForRequests } from "./pause-for-requests.ts";

export const defaultBootstrapRefits = 100;

/**
 * Above this many included tests, a review that did not ask for a number of refits gets
 * largeHistoryBootstrapRefits instead of defaultBootstrapRefits (stated in its assumptions): each
 * refit costs a fit of the whole history, and with so many tests the refitted priors vary little,
 * so 20 refits already place the 2.5 % / 97.5 % percentiles of the program sums to within a small
 * share of the interval's width (common practice: fewer bootstrap draws when the interval is narrow).
 */
export const largeHistoryTests = 20_000;
export const largeHistoryBootstrapRefits = 20;
/** Grid points of the grid family's sensitivity row above largeHistoryTests tests. */
export const largeHistoryGridPoints = 100;

/** What the fits depend on besides the tests. */
export interface FitSettings {
  readonly nullWeight: number | null;
  readonly priorFamily: FitFamily | "auto";
  /** Refits resolved (the default when not asked). */
  readonly bootstrap: number;
  /** Whether the request named the number of refits (a default is lowered for a large history). */
  readonly bootstrapAsked: boolean;
  readonly seed: number;
}

export interface ReviewFits {
  readonly fit: PriorFit;
  /** The other families' fits, for the sensitivity rows. */
  readonly alternatives: readonly FamilyFit[];
  readonly bootstrapPriors: readonly EffectPrior[];
  /** The grid row was fitted on largeHistoryGridPoints points. */
  readonly gridRowCoarse: boolean;
  /** The default number of refits was lowered to largeHistoryBootstrapRefits. */
  readonly lowered: boolean;
}

/** The grid family on a coarser grid of equally spaced points (the nonparametric MLE's support). */
function coarseGridFit(data: SummaryData, nullWeight: number): FamilyFit {
  const grid = thetaGridComponents(data, largeHistoryGridPoints);
  return fitOnMatrix(likelihoodMatrix(data.y, data.s, grid), grid, "grid", nullWeight);
}

/**
 * fitEffectPrior for one family (the same code path: familyComponents, likelihoodMatrix,
 * fitOnMatrix), keeping its likelihood matrix over shared memory.
 */
function fitOnSharedMatrix(
  data: SummaryData,
  y: Float64Array,
  s: Float64Array,
  family: FitFamily,
  nullWeight: number,
): { fit: PriorFit; matrix: LikelihoodMatrix } {
  const grid = familyComponents(data, family);
  const matrix = likelihoodMatrix(y, s, grid, { shared: true });
  const fit = { ...fitOnMatrix(matrix, grid, family, nullWeight), nullWeight, observationCount: y.length };
  return { fit, matrix };
}

export async function fitReviewPriors(
  observations: readonly Observation[],
  settings: FitSettings,
  progress: (message: string) => void,
): Promise<ReviewFits> {
  const fitOptions = settings.nullWeight !== null ? { nullWeight: settings.nullWeight } : {};
  // A large history fits the grid sensitivity row on a coarser grid (its cost grows with
  // tests x points); the grid is never the chosen family under "auto", so only that row moves.
  const coarseGrid = observations.length > largeHistoryTests;
  const nullWeight = settings.nullWeight ?? defaultNullWeight;
  // A large history also gets the helper thread: the coarse grid fit, then a share of the refits.
  const helper =
    coarseGrid && (settings.priorFamily !== "grid" || settings.bootstrap > 0) ? helperThread() : null;
  const columns = observationColumns(observations);
  const y = helper ? sharedFloat64(columns.y) : columns.y;
  const s = helper ? sharedFloat64(columns.s) : columns.s;
  const gridFromHelper =
    helper && settings.priorFamily !== "grid"
      ? coarseGridOnHelper(helper, y, s, largeHistoryGridPoints, nullWeight).catch(() => null)
      : null;
  const coarseGridAlternative = async (): Promise<FamilyFit> =>
    (await gridFromHelper) ?? coarseGridFit(columns, nullWeight);
  let fit: PriorFit;
  let alternatives: FamilyFit[];
  // With the helper, the chosen family's matrix is built once, over shared memory, and serves the
  // refits on both threads.
  let sharedMatrix: LikelihoodMatrix | null = null;
  if (settings.priorFamily === "auto" && coarseGrid) {
    // The rule of fitEffectPrior's "auto": the better of symmetric and skewed by log-likelihood.
    const symmetric = fitOnSharedMatrix(columns, y, s, "symmetric", nullWeight);
    progress("fitting the skewed family (the symmetric one is fitted)");
    await pauseForRequests();
    const skewed = fitOnSharedMatrix(columns, y, s, "skewed", nullWeight);
    const chosen = skewed.fit.logLik > symmetric.fit.logLik ? skewed : symmetric;
    fit = chosen.fit;
    sharedMatrix = chosen.matrix;
    alternatives = [symmetric.fit, skewed.fit];
  } else {
    const chosen = fitEffectPrior(observations, { ...fitOptions, family: settings.priorFamily });
    fit = chosen;
    // Sensitivity: the other families, as fitted alongside ("auto") or fitted here.
    alternatives = chosen.alternatives
      ? [...chosen.alternatives]
      : (["symmetric", "skewed", "grid"] as const)
          .filter((family) => family !== chosen.family && !(family === "grid" && coarseGrid))
          .map((family) => fitEffectPrior(observations, { ...fitOptions, family }));
  }
  const gridRowCoarse = coarseGrid && fit.family !== "grid";
  const lowered =
    !settings.bootstrapAsked &&
    observations.length > largeHistoryTests &&
    settings.bootstrap > largeHistoryBootstrapRefits;
  const refitCount = lowered ? largeHistoryBootstrapRefits : settings.bootstrap;
  // Its own stream, so that the bootstrap and Lee & Shen's draws do not depend on each other.
  const bootstrapSeed = settings.seed + 7919;
  const onRefit = (done: number, total: number) => {
    if (done % 10 === 0 || done === total) progress(`bootstrap refit ${done} of ${total}`);
  };
  let bootstrapPriors: readonly EffectPrior[] = [];
  if (refitCount > 0) {
    progress(`refitting the prior to ${refitCount} bootstrap resamples`);
    await pauseForRequests();
    // Without the helper (a smaller history) every refit is done here, pausing between refits.
    bootstrapPriors = await refitsOnThreads(
      helper,
      fit,
      sharedMatrix ?? likelihoodMatrix(y, s, fit.grid, { shared: helper !== null }),
      refitCount,
      bootstrapSeed,
      onRefit,
    );
  }
  if (gridRowCoarse) alternatives.push(await coarseGridAlternative());
  if (settings.priorFamily === "auto" && coarseGrid) fit = { ...fit, alternatives };
  return { fit, alternatives, bootstrapPriors, gridRowCoarse, lowered };
}

/**
 * The fits as JSON text for the cache, and back: typed arrays and the numbers JSON cannot hold
 * (NaN, infinities, -0) are tagged, so that a review from cached fits is the review from fresh ones.
 */
export function fitsToJson(fits: ReviewFits): string {
  return JSON.stringify(fits, (_key, value: unknown) => {
    if (value instanceof Float64Array) return { $float64: Array.from(value, tagNumber) };
    return tagNumber(value);
  });
}

export function fitsFromJson(text: string): ReviewFits {
  return JSON.parse(text, (_key, value: unknown) => {
    if (value !== null && typeof value === "object") {
      if ("$float64" in value)
        return Float64Array.from((value as { $float64: unknown[] }).$float64, untagNumber);
      if ("$number" in value) return untagNumber(value);
    }
    return value;
  }) as ReviewFits;
}

function tagNumber<T>(value: T): T | { $number: string } {
  if (typeof value !== "number") return value;
  if (Number.isFinite(value) && !Object.is(value, -0)) return value;
  return { $number: Object.is(value, -0) ? "-0" : String(value) };
}

function untagNumber(value: unknown): number {
  if (typeof value === "number") return value;
  const tag = (value as { $number: string }).$number;
  return tag === "-0" ? -0 : Number(tag);
}
