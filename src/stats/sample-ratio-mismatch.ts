/**
 * Sample ratio mismatch: Pearson's chi-square goodness-of-fit test of the observed arm counts
 * against the planned split, for any number of arms k >= 2 (df = k - 1).
 * Source: Fabijan et al. (2019), "Diagnosing Sample Ratio Mismatch in Online Controlled
 * Experiments", KDD; the test is R's `chisq.test(counts, p = plannedShares)` without correction.
 * Flag threshold: p < 0.0005 (common practice; statistics.md section 1).
 * Example: sampleRatioMismatch([5000, 5200], [0.5, 0.5]) -> statistic 3.92156862745098, df 1,
 * pValue 0.04767...
 */
import { chiSquareSurvival } from "./distributions.ts";
import { StatsInputError } from "./errors.ts";

export interface SampleRatioMismatchResult {
  /** Pearson's X^2 = sum (observed - expected)^2 / expected. */
  readonly statistic: number;
  /** Degrees of freedom, arms - 1. */
  readonly df: number;
  /** P(X^2 >= statistic) under the planned split. */
  readonly pValue: number;
}

/** The p-value below which a split is flagged (common practice; Fabijan et al. 2019). */
export const sampleRatioMismatchThreshold = 0.0005;

/**
 * @param counts observed units per arm (non-negative integers, at least one positive)
 * @param plannedShares the planned share of each arm; positive, normalised here when they sum
 *   to something other than 1 (so a 2:1:1 plan may be given as [2, 1, 1])
 */
export function sampleRatioMismatch(
  counts: readonly number[],
  plannedShares: readonly number[],
): SampleRatioMismatchResult {
  if (counts.length < 2) throw new StatsInputError("counts", "at least two arms", counts.length);
  if (plannedShares.length !== counts.length) {
    throw new StatsInputError(
      "plannedShares",
      `one share per arm (${counts.length})`,
      `${plannedShares.length} shares`,
    );
  }
  let total = 0;
  counts.forEach((count, arm) => {
    if (!Number.isInteger(count) || count < 0) {
      throw new StatsInputError(`counts[${arm}]`, "a non-negative integer", count);
    }
    total += count;
  });
  if (total === 0) throw new StatsInputError("counts", "a total above 0", total);
  let shareTotal = 0;
  plannedShares.forEach((share, arm) => {
    if (!Number.isFinite(share) || share <= 0) {
      throw new StatsInputError(`plannedShares[${arm}]`, "a positive finite number", share);
    }
    shareTotal += share;
  });
  let statistic = 0;
  counts.forEach((count, arm) => {
    const expected = (total * (plannedShares[arm] as number)) / shareTotal;
    const deviation = count - expected;
    statistic += (deviation * deviation) / expected;
  });
  const df = counts.length - 1;
  return { statistic, df, pValue: chiSquareSurvival(statistic, df) };
}
