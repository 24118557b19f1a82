/**
 * Relative lift and its standard error from arm means and standard deviations (a continuous metric).
 * Source: statistics.md section 1; the delta method for a ratio of independent means, first order
 * (e.g. Deng, Knoblich & Lu 2018, "Applying the Delta Method in Metric Analytics", KDD, section 3).
 * Convention: `lift = m_t / m_c - 1`, `Var ~ sd_t^2 / (n_t m_c^2) + m_t^2 sd_c^2 / (n_c m_c^4)`,
 * where sd is the per-unit standard deviation of each arm. No sign flip here.
 * Example: liftFromMeans({ controlMean: 10, controlSd: 5, controlN: 100, treatmentMean: 11,
 * treatmentSd: 5, treatmentN: 100 }) -> lift 0.1 (to rounding), standardError 0.07433034373659253,
 * absoluteDifference 1.
 */
import { requireFinite, StatsInputError } from "./errors.ts";
import type { LiftEstimate } from "./lift-from-counts.ts";

export interface ArmMeans {
  readonly controlMean: number;
  readonly controlSd: number;
  readonly controlN: number;
  readonly treatmentMean: number;
  readonly treatmentSd: number;
  readonly treatmentN: number;
}

export function liftFromMeans(means: ArmMeans): LiftEstimate {
  for (const [parameter, n] of [
    ["controlN", means.controlN],
    ["treatmentN", means.treatmentN],
  ] as const) {
    if (!Number.isInteger(n) || n < 2) throw new StatsInputError(parameter, "an integer of at least 2", n);
  }
  requireFinite("controlMean", means.controlMean);
  requireFinite("treatmentMean", means.treatmentMean);
  for (const [parameter, sd] of [
    ["controlSd", means.controlSd],
    ["treatmentSd", means.treatmentSd],
  ] as const) {
    if (!Number.isFinite(sd) || sd < 0)
      throw new StatsInputError(parameter, "a finite number of at least 0", sd);
  }
  if (means.controlMean === 0)
    throw new StatsInputError("controlMean", "non-zero (the lift divides by it)", 0);
  const ratio = means.treatmentMean / means.controlMean;
  const controlMeanSquared = means.controlMean * means.controlMean;
  const variance =
    (means.treatmentSd * means.treatmentSd) / (means.treatmentN * controlMeanSquared) +
    (means.treatmentMean * means.treatmentMean * means.controlSd * means.controlSd) /
      (means.controlN * controlMeanSquared * controlMeanSquared);
  const standardError = Math.sqrt(variance);
  if (!(standardError > 0) || !Number.isFinite(standardError)) {
    throw new StatsInputError("standard error", "a positive finite number", standardError);
  }
  return {
    lift: ratio - 1,
    standardError,
    absoluteDifference: means.treatmentMean - means.controlMean,
  };
}
