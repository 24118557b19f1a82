/**
 * Power and sample size for comparing two proportions by the normal approximation, R's
 * `power.prop.test` formula (R Core Team, stats package; Fleiss, Levin & Paik 2003, 4.2):
 *   power = Phi((|p1 - p2| sqrt(n) - z sqrt(2 pbar qbar)) / sqrt(p1 q1 + p2 q2)),
 * generalised to an unequal split (n1 = n, n2 = ratio * n; pbar weighted by arm size):
 *   power = Phi((|p1 - p2| - z sqrt(pbar qbar (1/n1 + 1/n2))) / sqrt(p1 q1 / n1 + p2 q2 / n2)),
 * with R's two conventions for a two-sided test ("upperTail" = strict FALSE; "strict" adds the
 * opposite tail). A named alternative: Cohen's h = 2 asin sqrt p2 - 2 asin sqrt p1 with
 * n = 2 ((z_{1-alpha/2} + z_{power}) / h)^2 per arm (Cohen 1988, ch. 6: the arcsine
 * transform has variance 1/n per arm, so a difference of two has 2/n).
 * Example: twoProportionPower({ n: 50, p1: 0.5, p2: 0.75 }) -> 0.7401659 (R's documented example).
 */
import { normalCdf, normalQuantile } from "./distributions.ts";
import { requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import { findIncreasingRoot } from "./find-root.ts";
import type { Sidedness, TailConvention } from "./sample-size-t.ts";

export interface TwoProportionDesign {
  /** Control (baseline) proportion. */
  readonly p1: number;
  /** Treatment proportion. */
  readonly p2: number;
  readonly alpha?: number;
  /** Treatment arm size / control arm size, default 1. */
  readonly ratio?: number;
  readonly sides?: Sidedness;
  readonly convention?: TailConvention;
  /**
   * Multiplies every variance (default 1): 1 - rho^2 for a pre-period covariate with
   * correlation rho (Deng, Xu, Kohavi & Walker 2013, WSDM).
   */
  readonly varianceFactor?: number;
}

interface Resolved {
  readonly p1: number;
  readonly p2: number;
  readonly alpha: number;
  readonly ratio: number;
  readonly sides: Sidedness;
  readonly convention: TailConvention;
  readonly varianceFactor: number;
}

function resolve(design: TwoProportionDesign): Resolved {
  requireOpenUnit("p1", design.p1);
  requireOpenUnit("p2", design.p2);
  if (design.p1 === design.p2) throw new StatsInputError("p2", "different from p1", design.p2);
  const alpha = design.alpha ?? 0.05;
  requireOpenUnit("alpha", alpha);
  const ratio = design.ratio ?? 1;
  requirePositive("ratio", ratio);
  const varianceFactor = design.varianceFactor ?? 1;
  if (!(varianceFactor > 0 && varianceFactor <= 1)) {
    throw new StatsInputError("varianceFactor", "in (0, 1]", varianceFactor);
  }
  return {
    p1: design.p1,
    p2: design.p2,
    alpha,
    ratio,
    sides: design.sides ?? "twoSided",
    convention: design.convention ?? "upperTail",
    varianceFactor,
  };
}

function powerAt(n: number, design: Resolved): number {
  const { p1, p2, ratio, varianceFactor } = design;
  const treatment = ratio * n;
  const difference = Math.abs(p1 - p2);
  const pooled = (p1 * n + p2 * treatment) / (n + treatment);
  const nullSe = Math.sqrt(varianceFactor * pooled * (1 - pooled) * (1 / n + 1 / treatment));
  const alternativeSe = Math.sqrt(varianceFactor * ((p1 * (1 - p1)) / n + (p2 * (1 - p2)) / treatment));
  const tailAlpha = design.sides === "twoSided" ? design.alpha / 2 : design.alpha;
  const critical = -normalQuantile(tailAlpha);
  const upper = normalCdf((difference - critical * nullSe) / alternativeSe);
  if (design.sides === "twoSided" && design.convention === "strict") {
    return upper + normalCdf(-(difference + critical * nullSe) / alternativeSe);
  }
  return upper;
}

/** Power with n units in the control arm. */
export function twoProportionPower(design: TwoProportionDesign & { readonly n: number }): number {
  const resolved = resolve(design);
  if (!Number.isFinite(design.n) || design.n < 2) throw new StatsInputError("n", "at least 2", design.n);
  return powerAt(design.n, resolved);
}

/** Control-arm size (real-valued) at which the target power is reached. */
export function twoProportionSampleSize(design: TwoProportionDesign & { readonly power: number }): number {
  const resolved = resolve(design);
  requireOpenUnit("power", design.power);
  if (design.power <= resolved.alpha / 2)
    throw new StatsInputError("power", `above alpha (${resolved.alpha})`, design.power);
  const n = findIncreasingRoot((size) => powerAt(size, resolved) - design.power, 2, 1e14);
  if (Number.isNaN(n)) throw new StatsInputError("p2", "far enough from p1 to reach the power", design.p2);
  return n;
}

/** Cohen's effect size h for two proportions (Cohen 1988, ch. 6). */
export function cohensH(p1: number, p2: number): number {
  requireOpenUnit("p1", p1);
  requireOpenUnit("p2", p2);
  return 2 * Math.asin(Math.sqrt(p2)) - 2 * Math.asin(Math.sqrt(p1));
}

/** Per-arm size by Cohen's h (equal arms; arcsine-transformed normal approximation). */
export function cohensHSampleSize(input: {
  readonly p1: number;
  readonly p2: number;
  readonly power: number;
  readonly alpha?: number;
}): number {
  const alpha = input.alpha ?? 0.05;
  requireOpenUnit("alpha", alpha);
  requireOpenUnit("power", input.power);
  if (input.power <= alpha / 2) throw new StatsInputError("power", `above alpha (${alpha})`, input.power);
  const h = cohensH(input.p1, input.p2);
  if (h === 0) throw new StatsInputError("p2", "different from p1", input.p2);
  const z = normalQuantile(1 - alpha / 2) + normalQuantile(input.power);
  return 2 * (z / h) ** 2;
}
