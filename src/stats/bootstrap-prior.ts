/**
 * Uncertainty of the fitted prior by the nonparametric bootstrap over results (Efron & Tibshirani
 * 1993, An Introduction to the Bootstrap, ch. 6 and 13; statistics.md section 5): resample the N
 * results with replacement, refit, and summarize. Each refit keeps the full-data component grid
 * and warm-starts from the full-data weights; a resample is the same likelihood matrix with
 * multinomial row counts, so the matrix is built once. Intervals are percentile intervals at
 * `level` (default 0.9); the standard error is the sd of the replicates.
 * Randomness comes from the injected seeded generator: the same seed gives the same intervals.
 */
import type { EffectPrior } from "./effect-prior.ts";
import { requireOpenUnit, StatsInputError } from "./errors.ts";
import {
  type FamilyFit,
  fitOnMatrix,
  type Observation,
  observationColumns,
  type PriorFit,
} from "./fit-effect-prior.ts";
import { type LikelihoodMatrix, likelihoodMatrix } from "./likelihood-matrix.ts";
import { type PriorSummary, summarizePrior } from "./prior-summary.ts";
import { createRandom, type RandomSource } from "./random.ts";

export interface BootstrapOptions {
  readonly replicates: number;
  /** Seed of the generator (default 1); ignored when `random` is given. */
  readonly seed?: number;
  readonly random?: RandomSource;
  /** Practical threshold of the summaries (default 0). */
  readonly threshold?: number;
  /** Level of the percentile intervals (default 0.9). */
  readonly level?: number;
  /** Called after each refit with (done, total). */
  readonly onProgress?: (done: number, total: number) => void;
}

export interface BootstrapInterval {
  /** The full-data value. */
  readonly estimate: number;
  readonly lower: number;
  readonly upper: number;
  readonly standardError: number;
}

export const summaryFigures = [
  "nullShare",
  "winRate",
  "lossRate",
  "meanWinSize",
  "meanLossSize",
  "mean",
  "sd",
] as const;
export type SummaryFigure = (typeof summaryFigures)[number];

export interface PriorBootstrap {
  readonly replicates: number;
  readonly seed: number | null;
  readonly level: number;
  readonly threshold: number;
  readonly intervals: Readonly<Record<SummaryFigure, BootstrapInterval | null>>;
  /** The refitted priors, for figures computed elsewhere (program review) on each replicate. */
  readonly priors: readonly EffectPrior[];
  /** Refits that reached the optimality condition. */
  readonly convergedCount: number;
}

export function bootstrapPrior(
  observations: readonly Observation[],
  fit: PriorFit,
  options: BootstrapOptions,
): PriorBootstrap {
  const replicates = options.replicates;
  if (!Number.isInteger(replicates) || replicates < 1)
    throw new StatsInputError("replicates", "an integer >= 1", replicates);
  const level = options.level ?? 0.9;
  requireOpenUnit("level", level);
  const threshold = options.threshold ?? 0;
  const random = options.random ?? createRandom(options.seed ?? 1);
  const data = observationColumns(observations);
  const count = data.y.length;
  const matrix = likelihoodMatrix(data.y, data.s, fit.grid);
  const counts = new Int32Array(count);
  const priors: EffectPrior[] = [];
  const summaries: PriorSummary[] = [];
  let convergedCount = 0;
  for (let b = 0; b < replicates; b++) {
    const refit = refitResample(matrix, fit, drawResample(count, random, counts));
    if (refit.converged) convergedCount++;
    priors.push(refit.prior);
    summaries.push(summarizePrior(refit.prior, { threshold, densityPoints: 2 }));
    options.onProgress?.(b + 1, replicates);
  }
  const full = summarizePrior(fit.prior, { threshold, densityPoints: 2 });
  const intervals = {} as Record<SummaryFigure, BootstrapInterval | null>;
  for (const figure of summaryFigures) {
    const estimate = full[figure];
    const values = summaries
      .map((summary) => summary[figure])
      .filter((value): value is number => value !== null);
    intervals[figure] =
      estimate === null || values.length === 0 ? null : percentileInterval(estimate, values, level);
  }
  return {
    replicates,
    seed: options.random ? null : (options.seed ?? 1),
    level,
    threshold,
    intervals,
    priors,
    convergedCount,
  };
}

/** One bootstrap resample as rows of the likelihood matrix with their multiplicities. */
export interface Resample {
  readonly rows: Int32Array;
  readonly rowWeights: Float64Array;
}

/**
 * Draws the next resample of `count` results from `random` (count draws with replacement);
 * `counts` is scratch of length count. Resamples drawn in turn from one seeded generator are the
 * ones bootstrapPrior refits, so a caller can draw them first and refit them in any order.
 */
export function drawResample(count: number, random: RandomSource, counts: Int32Array): Resample {
  counts.fill(0);
  for (let draw = 0; draw < count; draw++) {
    const index = random.integer(count);
    counts[index] = (counts[index] as number) + 1;
  }
  let distinct = 0;
  for (let i = 0; i < count; i++) if ((counts[i] as number) > 0) distinct++;
  const rows = new Int32Array(distinct);
  const rowWeights = new Float64Array(distinct);
  let position = 0;
  for (let i = 0; i < count; i++) {
    if ((counts[i] as number) > 0) {
      rows[position] = i;
      rowWeights[position] = counts[i] as number;
      position++;
    }
  }
  return { rows, rowWeights };
}

/** The refit of one resample: the full-data grid, warm-started from the full-data weights. */
export function refitResample(
  matrix: LikelihoodMatrix,
  fit: Pick<PriorFit, "grid" | "family" | "nullWeight" | "componentWeights">,
  resample: Resample,
): FamilyFit {
  return fitOnMatrix(matrix, fit.grid, fit.family, fit.nullWeight, {
    rows: resample.rows,
    rowWeights: resample.rowWeights,
    initialWeights: fit.componentWeights,
  });
}

/** Percentile interval (R quantile type 7 on the sorted replicates) and the replicate sd. */
function percentileInterval(estimate: number, values: number[], level: number): BootstrapInterval {
  const sorted = [...values].sort((a, b) => a - b);
  const quantile = (p: number): number => {
    const position = (sorted.length - 1) * p;
    const below = Math.floor(position);
    const above = Math.min(sorted.length - 1, below + 1);
    const fraction = position - below;
    return (sorted[below] as number) * (1 - fraction) + (sorted[above] as number) * fraction;
  };
  const mean = values.reduce((sum, value) => sum + value, 0) / values.length;
  const variance =
    values.length > 1 ? values.reduce((sum, value) => sum + (value - mean) ** 2, 0) / (values.length - 1) : 0;
  return {
    estimate,
    lower: quantile((1 - level) / 2),
    upper: quantile((1 + level) / 2),
    standardError: Math.sqrt(variance),
  };
}
