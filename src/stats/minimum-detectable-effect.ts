/**
 * Minimum detectable effect: the smallest true difference that a design of n units per control
 * arm detects with the target power, found by inverting the power functions of
 * sample-size-t.ts (means, exact noncentral t) and sample-size-proportions.ts (rates, R's
 * power.prop.test formula). Reported both absolute and relative to the baseline
 * (relative = absolute / baseline, the lift scale of statistics.md section 0).
 * Example: proportionMinimumDetectableEffect({ baseline: 0.5, n: 50, power: 0.7401659 }).absolute
 * -> 0.25 (R's power.prop.test example read backwards).
 */
import { requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import { findRoot } from "./find-root.ts";
import { type TwoProportionDesign, twoProportionPower } from "./sample-size-proportions.ts";
import { type TwoSampleTDesign, twoSampleTPower } from "./sample-size-t.ts";

export interface MinimumDetectableEffect {
  /** Absolute difference (treatment - control). */
  readonly absolute: number;
  /** absolute / baseline, when a baseline is known. */
  readonly relative: number | undefined;
}

type ProportionOptions = Omit<TwoProportionDesign, "p1" | "p2">;

/** Upward MDE on a baseline rate. */
export function proportionMinimumDetectableEffect(
  input: ProportionOptions & { readonly baseline: number; readonly n: number; readonly power: number },
): MinimumDetectableEffect {
  requireOpenUnit("baseline", input.baseline);
  requireOpenUnit("power", input.power);
  if (!Number.isFinite(input.n) || input.n < 2) throw new StatsInputError("n", "at least 2", input.n);
  const { baseline, n, power, ...options } = input;
  const objective = (p2: number) => twoProportionPower({ ...options, p1: baseline, p2, n }) - power;
  const highest = 1 - 1e-12;
  if (objective(highest) < 0) {
    throw new StatsInputError("n", "large enough that some rate below 1 reaches the power", n);
  }
  const treatmentRate = findRoot(objective, baseline + (1 - baseline) * 1e-12, highest, 1e-15);
  const absolute = treatmentRate - baseline;
  return { absolute, relative: absolute / baseline };
}

type MeanOptions = Omit<TwoSampleTDesign, "delta">;

/** MDE of a difference in means; relative when the baseline mean is given. */
export function meanMinimumDetectableEffect(
  input: MeanOptions & { readonly n: number; readonly power: number; readonly mean?: number },
): MinimumDetectableEffect {
  requirePositive("sd", input.sd);
  requireOpenUnit("power", input.power);
  if (!Number.isFinite(input.n) || input.n < 2) throw new StatsInputError("n", "at least 2", input.n);
  if (input.mean !== undefined && (!Number.isFinite(input.mean) || input.mean === 0)) {
    throw new StatsInputError("mean", "a non-zero finite number", input.mean);
  }
  const { n, power, mean, ...options } = input;
  const objective = (delta: number) => twoSampleTPower({ ...options, delta, n }) - power;
  let upper = input.sd;
  while (objective(upper) < 0) upper *= 2;
  const absolute = findRoot(objective, input.sd * 1e-9, upper, 1e-15);
  return { absolute, relative: mean === undefined ? undefined : absolute / Math.abs(mean) };
}
