/**
 * Power and sample size of the two-sample t-test, exact with the noncentral t, as R's
 * `power.t.test(type = "two.sample")` computes them (R Core Team, stats package), extended to
 * an unequal split: n1 = n in the control arm, n2 = ratio * n in the treatment arm,
 * df = n1 + n2 - 2, ncp = delta / (sd sqrt(1/n1 + 1/n2)). With ratio 1 this is R's formula.
 * Two conventions for a two-sided test (R's `strict`):
 * - "upperTail" (R's default strict = FALSE): power counts rejections in the direction of delta only;
 * - "strict" (strict = TRUE): it adds the rejections in the opposite tail.
 * Sample size solves power(n) = target by Brent's method (R uses uniroot the same way).
 * Example: twoSampleTPower({ n: 20, delta: 1, sd: 1 }) -> 0.8689528 (R's documented example).
 */
import { noncentralTCdf, noncentralTSurvival, studentTQuantile } from "./distributions.ts";
import { requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import { findIncreasingRoot } from "./find-root.ts";

export type TailConvention = "upperTail" | "strict";
export type Sidedness = "twoSided" | "oneSided";

export interface TwoSampleTDesign {
  /** Absolute difference in means to detect. */
  readonly delta: number;
  /** Per-unit standard deviation (common to both arms). */
  readonly sd: number;
  /** Significance level, default 0.05. */
  readonly alpha?: number;
  /** Treatment arm size / control arm size, default 1. */
  readonly ratio?: number;
  readonly sides?: Sidedness;
  readonly convention?: TailConvention;
}

export const defaultSampleAlpha = 0.05;

interface Resolved {
  readonly delta: number;
  readonly sd: number;
  readonly alpha: number;
  readonly ratio: number;
  readonly sides: Sidedness;
  readonly convention: TailConvention;
}

function resolve(design: TwoSampleTDesign): Resolved {
  if (!Number.isFinite(design.delta) || design.delta === 0) {
    throw new StatsInputError("delta", "a non-zero finite number", design.delta);
  }
  requirePositive("sd", design.sd);
  const alpha = design.alpha ?? defaultSampleAlpha;
  requireOpenUnit("alpha", alpha);
  const ratio = design.ratio ?? 1;
  requirePositive("ratio", ratio);
  return {
    delta: Math.abs(design.delta),
    sd: design.sd,
    alpha,
    ratio,
    sides: design.sides ?? "twoSided",
    convention: design.convention ?? "upperTail",
  };
}

/** The power kernel at control-arm size n (real-valued, n >= 2 assumed). */
function powerAt(n: number, design: Resolved): number {
  const treatment = design.ratio * n;
  const df = n + treatment - 2;
  const ncp = design.delta / (design.sd * Math.sqrt(1 / n + 1 / treatment));
  const tailAlpha = design.sides === "twoSided" ? design.alpha / 2 : design.alpha;
  const critical = studentTQuantile(1 - tailAlpha, df);
  const upper = noncentralTSurvival(critical, df, ncp);
  if (design.sides === "twoSided" && design.convention === "strict")
    return upper + noncentralTCdf(-critical, df, ncp);
  return upper;
}

/** Power of the two-sample t-test with n units in the control arm. */
export function twoSampleTPower(design: TwoSampleTDesign & { readonly n: number }): number {
  const resolved = resolve(design);
  if (!Number.isFinite(design.n) || design.n < 2) throw new StatsInputError("n", "at least 2", design.n);
  return powerAt(design.n, resolved);
}

/** Control-arm size (real-valued; round up to plan) at which the t-test reaches the target power. */
export function twoSampleTSampleSize(design: TwoSampleTDesign & { readonly power: number }): number {
  const resolved = resolve(design);
  requireOpenUnit("power", design.power);
  const floor =
    resolved.sides === "twoSided" && resolved.convention === "upperTail"
      ? resolved.alpha / 2
      : resolved.alpha;
  if (design.power <= floor)
    throw new StatsInputError("power", `above alpha (${resolved.alpha})`, design.power);
  // Smallest n with a defined test: both arms >= 1 unit and df >= 1.
  const lower = Math.max(2, 1 / resolved.ratio + 1e-9);
  const n = findIncreasingRoot((size) => powerAt(size, resolved) - design.power, lower, 1e12);
  if (Number.isNaN(n)) {
    throw new StatsInputError("delta", "large enough to reach the power with under 1e12 units", design.delta);
  }
  return n;
}
