/**
 * Standard error of a relative lift from its estimate and a confidence interval of level L.
 * Source: statistics.md section 1; the normal-approximation interval, `s = (hi - lo) / (2 z_{(1+L)/2})`
 * (e.g. Altman & Bland 2011, "How to obtain the confidence interval from a P value", BMJ 343:d2090,
 * and the Cochrane Handbook, section 6.3.1, for the same back-calculation).
 * An asymmetric interval (half-widths differ by more than `asymmetryTolerance` of the width) is read
 * on the log scale, where ratio intervals are symmetric: `s_log = (log(1+hi) - log(1+lo)) / (2 z)`
 * and, by the delta method, `s = (1 + lift) * s_log`. The result says which reading was used.
 * Example: liftFromInterval({ lift: 0.02, low: 0.0004, high: 0.0396, level: 0.95 }) ->
 * standardError 0.010000183755723221 (= 0.0392 / (2 * 1.959963984540054)), scale "linear".
 */
import { normalQuantile } from "./distributions.ts";
import { requireFinite, requireOpenUnit, StatsInputError } from "./errors.ts";
import type { LiftEstimate } from "./lift-from-counts.ts";

export interface LiftInterval {
  readonly lift: number;
  readonly low: number;
  readonly high: number;
  /** Confidence level L in (0, 1), e.g. 0.95. */
  readonly level: number;
}

export interface IntervalLiftEstimate extends LiftEstimate {
  /** `linear`: a symmetric interval read as is; `log`: an asymmetric one read on log(1 + lift). */
  readonly scale: "linear" | "log";
}

/**
 * Half-widths that differ by more than this share of the width mark an interval as asymmetric.
 * Common practice: loose enough that intervals rounded to a few digits still read as symmetric.
 */
export const asymmetryTolerance = 0.05;

export function liftFromInterval(interval: LiftInterval): IntervalLiftEstimate {
  requireFinite("lift", interval.lift);
  requireFinite("low", interval.low);
  requireFinite("high", interval.high);
  requireOpenUnit("level", interval.level);
  if (!(interval.high > interval.low)) {
    throw new StatsInputError("high", `above the low end ${interval.low}`, interval.high);
  }
  if (interval.lift < interval.low || interval.lift > interval.high) {
    throw new StatsInputError(
      "lift",
      `inside its interval [${interval.low}, ${interval.high}]`,
      interval.lift,
    );
  }
  const z = normalQuantile((1 + interval.level) / 2);
  const width = interval.high - interval.low;
  const asymmetry = Math.abs(interval.high - interval.lift - (interval.lift - interval.low));
  if (asymmetry <= asymmetryTolerance * width) {
    return { lift: interval.lift, standardError: width / (2 * z), absoluteDifference: null, scale: "linear" };
  }
  if (!(interval.low > -1)) {
    throw new StatsInputError(
      "low",
      "above -1 to read an asymmetric interval on the log scale",
      interval.low,
    );
  }
  // log1p keeps accuracy for the small lifts typical of online tests.
  const logStandardError = (Math.log1p(interval.high) - Math.log1p(interval.low)) / (2 * z);
  return {
    lift: interval.lift,
    standardError: (1 + interval.lift) * logStandardError,
    absoluteDifference: null,
    scale: "log",
  };
}
