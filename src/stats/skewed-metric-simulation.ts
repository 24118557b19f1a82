/**
 * Does the Welch t-test hold its nominal alpha on a skewed, zero-inflated metric (revenue per
 * user) at the planned n? A seeded simulation of A/A runs (false-positive rate) and A/B runs
 * (power at a relative lift), each with its Monte Carlo standard error (statistics.md section 9).
 *
 * Metric: a user pays with probability `payerShare`; a payer's spend is log-normal,
 * log(spend) ~ N(logMean, logSd^2). In the treatment arm of an A/B run every payer's spend is
 * multiplied by (1 + lift) (the payer share is unchanged), so the mean rises by the same share.
 * A normal metric is offered too, as the control case where the t-test is exact.
 * Test: two-sided Welch t-test with the Welch-Satterthwaite degrees of freedom (Welch 1947,
 * Biometrika 34:28). Nominal power: the normal approximation with the metric's true mean and
 * variance, Phi(delta/se - z) + Phi(-delta/se - z), se = sd sqrt(2/n) (common practice).
 * "Off nominal": |false-positive rate - alpha| > 2.576 sqrt(alpha (1 - alpha) / R), i.e. the
 * simulation rejects "actual alpha = nominal alpha" at the 1 % level.
 */
import { normalCdf, normalQuantile, studentTCdf } from "./distributions.ts";
import { requireFinite, requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import type { RandomSource } from "./random.ts";

export type SimulatedMetric =
  | {
      readonly kind: "zeroInflatedLogNormal";
      readonly payerShare: number;
      readonly logMean: number;
      readonly logSd: number;
    }
  | { readonly kind: "normal"; readonly mean: number; readonly sd: number };

export interface SkewCheckInput {
  readonly metric: SimulatedMetric;
  /** Users per arm. */
  readonly nPerArm: number;
  /** Relative lift of the A/B runs (default 0.05). */
  readonly lift?: number;
  /** Two-sided nominal alpha (default 0.05). */
  readonly alpha?: number;
  /** Simulated runs of each kind (A/A and A/B). */
  readonly simulations: number;
}

export interface SkewCheckResult {
  readonly falsePositiveRate: number;
  readonly falsePositiveRateStandardError: number;
  readonly power: number;
  readonly powerStandardError: number;
  readonly nominalAlpha: number;
  readonly nominalPower: number;
  /** The false-positive rate differs from alpha beyond Monte Carlo error (1 % level). */
  readonly offNominal: boolean;
  readonly lift: number;
  readonly nPerArm: number;
  readonly simulations: number;
  /** True mean, sd and skewness of one user's value. */
  readonly metricMean: number;
  readonly metricSd: number;
  readonly metricSkewness: number;
  readonly assumptions: readonly string[];
  readonly cautions: readonly string[];
}

/** Mean, sd and skewness of one user's value. */
export function metricMoments(metric: SimulatedMetric): { mean: number; sd: number; skewness: number } {
  if (metric.kind === "normal") return { mean: metric.mean, sd: metric.sd, skewness: 0 };
  // E[X^k] = p exp(k mu + k^2 sigma^2 / 2) for the zero-inflated log-normal.
  const raw = (k: number) =>
    metric.payerShare * Math.exp(k * metric.logMean + (k * k * metric.logSd * metric.logSd) / 2);
  const mean = raw(1);
  const variance = raw(2) - mean * mean;
  const third = raw(3) - 3 * mean * raw(2) + 2 * mean ** 3;
  return { mean, sd: Math.sqrt(variance), skewness: third / variance ** 1.5 };
}

function validate(input: SkewCheckInput): void {
  const { metric } = input;
  if (metric.kind === "zeroInflatedLogNormal") {
    if (!(metric.payerShare > 0 && metric.payerShare <= 1)) {
      throw new StatsInputError("payerShare", "in (0, 1]", metric.payerShare);
    }
    requireFinite("logMean", metric.logMean);
    requirePositive("logSd", metric.logSd);
  } else {
    requireFinite("mean", metric.mean);
    requirePositive("sd", metric.sd);
  }
  if (!Number.isInteger(input.nPerArm) || input.nPerArm < 2) {
    throw new StatsInputError("nPerArm", "an integer of at least 2", input.nPerArm);
  }
  if (!Number.isInteger(input.simulations) || input.simulations < 10) {
    throw new StatsInputError("simulations", "an integer of at least 10", input.simulations);
  }
  requireOpenUnit("alpha", input.alpha ?? 0.05);
  requireFinite("lift", input.lift ?? 0.05);
  if ((input.lift ?? 0.05) <= -1) throw new StatsInputError("lift", "above -1", input.lift);
}

/** Runs the simulation with the injected random source (seed it for a reproducible result). */
export function simulateSkewedMetric(input: SkewCheckInput, random: RandomSource): SkewCheckResult {
  validate(input);
  const alpha = input.alpha ?? 0.05;
  const lift = input.lift ?? 0.05;
  const { nPerArm, simulations, metric } = input;
  const draw = (scale: number): number => {
    if (metric.kind === "normal") return scale * metric.mean + metric.sd * random.normal();
    if (random.uniform() >= metric.payerShare) return 0;
    return scale * Math.exp(metric.logMean + metric.logSd * random.normal());
  };
  const arm = (scale: number): { mean: number; variance: number } => {
    // Welford's update keeps the variance accurate for spend values of very different sizes.
    let mean = 0;
    let sumSquares = 0;
    for (let i = 1; i <= nPerArm; i++) {
      const value = draw(scale);
      const delta = value - mean;
      mean += delta / i;
      sumSquares += delta * (value - mean);
    }
    return { mean, variance: sumSquares / (nPerArm - 1) };
  };
  const rejects = (treatmentScale: number): boolean => {
    const control = arm(1);
    const treatment = arm(treatmentScale);
    const controlShare = control.variance / nPerArm;
    const treatmentShare = treatment.variance / nPerArm;
    const se2 = controlShare + treatmentShare;
    if (!(se2 > 0)) return false;
    const t = (treatment.mean - control.mean) / Math.sqrt(se2);
    const df =
      (se2 * se2) / ((controlShare * controlShare + treatmentShare * treatmentShare) / (nPerArm - 1));
    const pValue = 2 * studentTCdf(-Math.abs(t), df);
    return pValue < alpha;
  };
  let falsePositives = 0;
  let detections = 0;
  for (let run = 0; run < simulations; run++) if (rejects(1)) falsePositives++;
  // For the normal metric the treatment mean is mean (1 + lift): shift by the lift, keep the sd.
  for (let run = 0; run < simulations; run++) if (rejects(1 + lift)) detections++;
  const falsePositiveRate = falsePositives / simulations;
  const power = detections / simulations;
  const moments = metricMoments(metric);
  const z = normalQuantile(1 - alpha / 2);
  const standardizedEffect = (lift * moments.mean) / (moments.sd * Math.sqrt(2 / nPerArm));
  const nominalPower = normalCdf(standardizedEffect - z) + normalCdf(-standardizedEffect - z);
  const nullError = Math.sqrt((alpha * (1 - alpha)) / simulations);
  const offNominal = Math.abs(falsePositiveRate - alpha) > 2.576 * nullError;
  const describeMetric =
    metric.kind === "normal"
      ? `Normal metric, mean ${metric.mean}, sd ${metric.sd}.`
      : `A user pays with probability ${metric.payerShare}; a payer's spend is log-normal with log-mean ${metric.logMean} and log-sd ${metric.logSd}.`;
  return {
    falsePositiveRate,
    falsePositiveRateStandardError: Math.sqrt((falsePositiveRate * (1 - falsePositiveRate)) / simulations),
    power,
    powerStandardError: Math.sqrt((power * (1 - power)) / simulations),
    nominalAlpha: alpha,
    nominalPower,
    offNominal,
    lift,
    nPerArm,
    simulations,
    metricMean: moments.mean,
    metricSd: moments.sd,
    metricSkewness: moments.skewness,
    assumptions: [
      describeMetric,
      `${simulations} A/A runs and ${simulations} A/B runs with ${nPerArm} users per arm; two-sided Welch t-test at alpha ${alpha}.`,
      `A/B runs multiply every payer's value by ${1 + lift} (relative lift ${lift}).`,
      "Nominal power: normal approximation with the metric's true mean and sd.",
      "offNominal: the simulated false-positive rate differs from alpha by more than 2.576 Monte Carlo standard errors.",
    ],
    cautions: [
      "This does not replace a statistician's review of the metric and its test.",
      "Not for clinical or safety-critical decisions.",
      "Simulated rates carry Monte Carlo error (see the standard errors); real spend can be heavier-tailed than log-normal.",
    ],
  };
}
