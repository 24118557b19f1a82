/**
 * The winner's-curse bias of a program's total claimed lift (Lee & Shen 2018, "Winner's Curse:
 * Bias Estimation for Total Effects of Features in Online Controlled Experiments", KDD).
 *
 * With y_i ~ N(theta_i, s_i^2) and test i launched when y_i / s_i > b_i, the sum of the launched
 * estimates overstates the sum of their true effects by, in expectation,
 * `beta = sum over ALL tests of s_i phi(b_i - theta_i / s_i)`: every test contributes, launched or
 * not, because selection is what makes the total biased. The estimate plugs y_i in for theta_i.
 * The interval is a parametric bootstrap (draw y*_i ~ N(y_i, s_i^2), recompute the plug-in bias;
 * percentile interval), the bootstrap Lee & Shen propose for the total (from memory of the paper:
 * their section on confidence intervals; the draw is the same, the reported quantity is ours).
 * Thresholds b_i are in z units (one-sided).
 *
 * From momentsFromTests tests on, the interval comes from the bootstrap distribution's exact
 * moments instead of draws: the bootstrap bias is a sum of independent terms s_i phi(c_i - e_i),
 * c_i = b_i - y_i/s_i, e_i ~ N(0, 1), and E[phi(c - e)^k] = (2 pi)^(-k/2) (1 + k)^(-1/2)
 * exp(-k c^2 / (2 (1 + k))) (the Gaussian integral of a product of normal densities), which gives
 * its mean, variance and third central moment; the percentiles are then Cornish-Fisher's
 * (normal quantile with the skewness term; Cornish & Fisher 1937). With thousands of terms the sum
 * is close to normal, and this is more precise than a few hundred draws, at O(n) instead of O(n B).
 *
 * Example: one test, y = 2, s = 1, b = 1.96: bias = phi(-0.04) = 0.39862...
 * Cost: O(n) for the estimate, O(n B) for B bootstrap draws below momentsFromTests tests.
 */
import { normalPdf, normalQuantile } from "./distributions.ts";
import { requireFinite, requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import type { RandomSource } from "./random.ts";

export interface LaunchedEstimate {
  readonly y: number;
  readonly s: number;
  /** One-sided launch threshold in z units for this test; defaults to the options' thresholdZ. */
  readonly thresholdZ?: number;
}

export interface WinnersCurseOptions {
  /** Default one-sided launch threshold (z); 1.959964 ships on the upper tail of a two-sided 5 % test. */
  readonly thresholdZ: number;
  /** Bootstrap draws (default 1000; 0 skips the interval). */
  readonly replicates?: number;
  readonly level?: number;
  readonly random?: RandomSource;
}

export interface WinnersCurseBias {
  /** Plug-in estimate of E[sum of launched y - sum of their theta]. */
  readonly bias: number;
  readonly launchedCount: number;
  /** Sum of y over tests with y / s > b. */
  readonly launchedTotal: number;
  /** launchedTotal - bias: Lee & Shen's bias-corrected total. */
  readonly correctedTotal: number;
  readonly interval: { readonly lower: number; readonly upper: number; readonly level: number } | null;
  readonly replicates: number;
  readonly method: string;
}

/** sum_i s_i phi(b_i - theta_i / s_i): the expected bias given true effects (Lee & Shen 2018, eq. for beta). */
export function expectedSelectionBias(
  trueEffects: readonly number[],
  standardErrors: readonly number[],
  thresholds: readonly number[],
): number {
  let total = 0;
  for (let i = 0; i < trueEffects.length; i++) {
    const s = standardErrors[i] as number;
    total += s * normalPdf((thresholds[i] as number) - (trueEffects[i] as number) / s);
  }
  return total;
}

function quantileOfSorted(sorted: readonly number[], probability: number): number {
  // R quantile type 7 (linear interpolation between order statistics).
  const position = (sorted.length - 1) * probability;
  const below = Math.floor(position);
  const above = Math.min(sorted.length - 1, below + 1);
  const fraction = position - below;
  return (sorted[below] as number) * (1 - fraction) + (sorted[above] as number) * fraction;
}

/** Lee & Shen (2018) winner's-curse bias of the launched total, with a parametric bootstrap interval. */
export function winnersCurseBias(
  tests: readonly LaunchedEstimate[],
  options: WinnersCurseOptions,
): WinnersCurseBias {
  requireFinite("thresholdZ", options.thresholdZ);
  const replicates = options.replicates ?? 1000;
  const level = options.level ?? 0.95;
  requireOpenUnit("level", level);
  if (!Number.isInteger(replicates) || replicates < 0) {
    throw new StatsInputError("replicates", "a non-negative integer", replicates);
  }
  if (replicates > 0 && !options.random)
    throw new StatsInputError("random", "a seeded RandomSource when replicates > 0", "none");
  const estimates = tests.map((test) => test.y);
  const errors = tests.map((test) => test.s);
  const thresholds = tests.map((test) => test.thresholdZ ?? options.thresholdZ);
  for (let i = 0; i < tests.length; i++) {
    requireFinite(`tests[${i}].y`, estimates[i] as number);
    requirePositive(`tests[${i}].s`, errors[i] as number);
    requireFinite(`tests[${i}].thresholdZ`, thresholds[i] as number);
  }
  const bias = expectedSelectionBias(estimates, errors, thresholds);
  let launchedCount = 0;
  let launchedTotal = 0;
  for (let i = 0; i < tests.length; i++) {
    const y = estimates[i] as number;
    if (y / (errors[i] as number) > (thresholds[i] as number)) {
      launchedCount++;
      launchedTotal += y;
    }
  }
  let interval: WinnersCurseBias["interval"] = null;
  const fromMoments = replicates > 0 && tests.length >= momentsFromTests;
  if (fromMoments) interval = momentInterval(estimates, errors, thresholds, level);
  else if (replicates > 0 && options.random && tests.length > 0) {
    const random = options.random;
    const draws: number[] = [];
    const redrawn = new Array<number>(tests.length);
    for (let b = 0; b < replicates; b++) {
      for (let i = 0; i < tests.length; i++)
        redrawn[i] = (estimates[i] as number) + (errors[i] as number) * random.normal();
      draws.push(expectedSelectionBias(redrawn, errors, thresholds));
    }
    draws.sort((a, b) => a - b);
    const tail = (1 - level) / 2;
    interval = { lower: quantileOfSorted(draws, tail), upper: quantileOfSorted(draws, 1 - tail), level };
  }
  return {
    bias,
    launchedCount,
    launchedTotal,
    correctedTotal: launchedTotal - bias,
    interval,
    replicates: interval && !fromMoments ? replicates : 0,
    method: fromMoments
      ? `Lee & Shen (2018): sum over all tests of s_i phi(b_i - y_i/s_i); percentile interval of its parametric bootstrap from the bootstrap distribution's exact moments (Cornish-Fisher; used from ${momentsFromTests} tests on, in place of draws)`
      : "Lee & Shen (2018): sum over all tests of s_i phi(b_i - y_i/s_i); parametric bootstrap percentile interval",
  };
}

/** From this many tests the bootstrap interval comes from exact moments (see the header). */
export const momentsFromTests = 1000;

/** E[phi(c - e)^k] for e ~ N(0, 1). */
function densityPowerMean(c: number, k: number): number {
  return ((2 * Math.PI) ** (-k / 2) * Math.exp((-k * c * c) / (2 * (1 + k)))) / Math.sqrt(1 + k);
}

/**
 * Mean, variance and third central moment of sum_i s_i phi(b_i - y*_i/s_i) with y*_i ~ N(y_i, s_i^2)
 * (the parametric bootstrap of the bias), exactly.
 */
export function bootstrapBiasMoments(
  estimates: readonly number[],
  errors: readonly number[],
  thresholds: readonly number[],
): { mean: number; variance: number; thirdCentral: number } {
  let mean = 0;
  let variance = 0;
  let thirdCentral = 0;
  for (let i = 0; i < estimates.length; i++) {
    const s = errors[i] as number;
    const c = (thresholds[i] as number) - (estimates[i] as number) / s;
    const m1 = densityPowerMean(c, 1);
    const m2 = densityPowerMean(c, 2);
    const m3 = densityPowerMean(c, 3);
    mean += s * m1;
    variance += s * s * (m2 - m1 * m1);
    thirdCentral += s * s * s * (m3 - 3 * m2 * m1 + 2 * m1 * m1 * m1);
  }
  return { mean, variance: Math.max(0, variance), thirdCentral };
}

function momentInterval(
  estimates: readonly number[],
  errors: readonly number[],
  thresholds: readonly number[],
  level: number,
): NonNullable<WinnersCurseBias["interval"]> {
  const { mean, variance, thirdCentral } = bootstrapBiasMoments(estimates, errors, thresholds);
  const sd = Math.sqrt(variance);
  const skewness = sd > 0 ? thirdCentral / (sd * sd * sd) : 0;
  const quantile = (p: number): number => {
    const z = normalQuantile(p);
    return mean + sd * (z + ((z * z - 1) * skewness) / 6);
  };
  const tail = (1 - level) / 2;
  return { lower: quantile(tail), upper: quantile(1 - tail), level };
}

/** One-sided threshold z* for a two-sided level alpha shipped on the upper tail: z_{1 - alpha/2}. */
export function launchThresholdZ(alpha: number): number {
  requireOpenUnit("alpha", alpha);
  return normalQuantile(1 - alpha / 2);
}
