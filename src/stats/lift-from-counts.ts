/**
 * Relative lift and its standard error from conversion counts (a binary metric).
 * Source: statistics.md section 1; the delta method for a ratio of proportions, first order
 * (e.g. Agresti, "Categorical Data Analysis", 3rd ed., section 3.1.4, for Var(log of a relative risk)).
 * Convention: `lift = p_t / p_c - 1`, `Var(log(p_t / p_c)) ~ (1-p_t)/(n_t p_t) + (1-p_c)/(n_c p_c)`,
 * `s = (1 + lift) * sqrt(that)`. No sign flip here: the import layer flips decrease metrics.
 * Example: liftFromCounts({ controlConversions: 100, controlN: 1000, treatmentConversions: 120,
 * treatmentN: 1000 }) -> lift 0.19999999999999996, standardError 0.15336231610144652, absoluteDifference 0.02 (to rounding).
 */
import { StatsInputError } from "./errors.ts";

/** A converted result before any direction flip. */
export interface LiftEstimate {
  /** Relative lift, treatment / control - 1. */
  readonly lift: number;
  /** Standard error of `lift`. */
  readonly standardError: number;
  /** Treatment minus control on the metric's own scale, when the input allows it. */
  readonly absoluteDifference: number | null;
}

export interface ConversionCounts {
  readonly controlConversions: number;
  readonly controlN: number;
  readonly treatmentConversions: number;
  readonly treatmentN: number;
}

export function liftFromCounts(counts: ConversionCounts): LiftEstimate {
  requireArmSize("controlN", counts.controlN);
  requireArmSize("treatmentN", counts.treatmentN);
  requireConversions("controlConversions", counts.controlConversions, counts.controlN);
  requireConversions("treatmentConversions", counts.treatmentConversions, counts.treatmentN);
  const controlRate = counts.controlConversions / counts.controlN;
  const treatmentRate = counts.treatmentConversions / counts.treatmentN;
  // A zero control rate leaves the ratio undefined; a zero treatment rate its log-scale variance.
  if (controlRate === 0)
    throw new StatsInputError("controlConversions", "above 0 (the lift divides by the control rate)", 0);
  if (treatmentRate === 0) {
    throw new StatsInputError("treatmentConversions", "above 0 (the delta-method variance divides by it)", 0);
  }
  const lift = treatmentRate / controlRate - 1;
  const logRatioVariance =
    (1 - treatmentRate) / (counts.treatmentN * treatmentRate) +
    (1 - controlRate) / (counts.controlN * controlRate);
  const standardError = (1 + lift) * Math.sqrt(logRatioVariance);
  if (!(standardError > 0) || !Number.isFinite(standardError)) {
    throw new StatsInputError(
      "standard error",
      "a positive finite number (both arms converted every unit)",
      standardError,
    );
  }
  return { lift, standardError, absoluteDifference: treatmentRate - controlRate };
}

function requireArmSize(parameter: string, n: number): void {
  if (!Number.isInteger(n) || n < 2) throw new StatsInputError(parameter, "an integer of at least 2", n);
}

function requireConversions(parameter: string, conversions: number, n: number): void {
  if (!Number.isInteger(conversions) || conversions < 0 || conversions > n) {
    throw new StatsInputError(parameter, `an integer from 0 to the arm's size ${n}`, conversions);
  }
}
