/**
 * Standard error of a relative lift from its estimate and a two-sided p-value.
 * Source: statistics.md section 1; `s = |lift| / z_{1 - p/2}` inverts the two-sided z-test
 * (Altman & Bland 2011, "How to obtain the confidence interval from a P value", BMJ 343:d2090).
 * p = 1 or lift = 0 carries no information about s and is refused.
 * Example: liftFromPValue({ lift: 0.02, pValue: 0.05 }) -> standardError 0.010204269 (= 0.02 / 1.959964).
 */
import { normalQuantile } from "./distributions.ts";
import { requireFinite, requireOpenUnit, StatsInputError } from "./errors.ts";
import type { LiftEstimate } from "./lift-from-counts.ts";

export interface LiftPValue {
  readonly lift: number;
  /** Two-sided p-value, strictly between 0 and 1. */
  readonly pValue: number;
}

export function liftFromPValue(input: LiftPValue): LiftEstimate {
  requireFinite("lift", input.lift);
  requireOpenUnit("pValue", input.pValue);
  if (input.lift === 0)
    throw new StatsInputError("lift", "non-zero to derive a standard error from a p-value", 0);
  // z_{1-p/2} = -z_{p/2}: the lower quantile keeps tiny p-values from rounding 1 - p/2 to 1.
  const z = -normalQuantile(input.pValue / 2);
  const standardError = Math.abs(input.lift) / z;
  if (!(standardError > 0) || !Number.isFinite(standardError)) {
    throw new StatsInputError("standard error", "a positive finite number", standardError);
  }
  return { lift: input.lift, standardError, absoluteDifference: null };
}
