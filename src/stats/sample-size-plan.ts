/**
 * A test plan from a metric, a minimum detectable effect and the traffic: units per arm, total
 * units and run length, or the power of a given size. It combines
 * - the two-sample t-test (continuous metric, sample-size-t.ts) or two proportions (conversion
 *   metric, sample-size-proportions.ts), with an unequal split `ratio` = treatment / control;
 * - k arms (one control, k - 1 treatments, each compared with the control), with the level split
 *   over the k - 1 comparisons by Bonferroni or left as is;
 * - variance reduction by a pre-period covariate with correlation rho: variance times
 *   (1 - rho^2) (Deng, Xu, Kohavi & Walker 2013, WSDM);
 * - run length: days = ceil(total units / eligible units per day) (statistics.md section 4).
 * Example: planSampleSize({ metric: { kind: "mean", sd: 1, delta: 0.5 }, power: 0.8 }).nPerArm -> 64
 * (Cohen 1988, Table 2.4.1: d = 0.5 needs 64 per group).
 */
import { requireFinite, requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import {
  meanMinimumDetectableEffect,
  proportionMinimumDetectableEffect,
} from "./minimum-detectable-effect.ts";
import { twoProportionPower, twoProportionSampleSize } from "./sample-size-proportions.ts";
import { type TailConvention, twoSampleTPower, twoSampleTSampleSize } from "./sample-size-t.ts";

export type PlanMetric =
  /** Conversion metric: baseline rate and a relative (lift) or absolute MDE. */
  | {
      readonly kind: "proportion";
      readonly baseline: number;
      readonly relativeEffect?: number;
      readonly absoluteEffect?: number;
    }
  /** Continuous metric: per-unit sd and the absolute difference to detect (or relative to a mean). */
  | {
      readonly kind: "mean";
      readonly sd: number;
      readonly delta?: number;
      readonly mean?: number;
      readonly relativeEffect?: number;
    };

export type MultipleComparisonCorrection = "bonferroni" | "none";

export interface PlanInput {
  readonly metric: PlanMetric;
  /** Two-sided level of the whole family of comparisons, default 0.05. */
  readonly alpha?: number;
  /** Treatment / control arm size, default 1. */
  readonly ratio?: number;
  /** Arms including the control, default 2. */
  readonly arms?: number;
  /** How the level is split over the arms - 1 comparisons, default "bonferroni". */
  readonly correction?: MultipleComparisonCorrection;
  /** Correlation rho of the metric with a pre-period covariate, default 0. */
  readonly covariateCorrelation?: number;
  /** Eligible units per day, for the run length. */
  readonly dailyTraffic?: number;
  readonly convention?: TailConvention;
}

export interface PlanBasis {
  readonly metricKind: "proportion" | "mean";
  /** Absolute difference the plan is sized for (treatment - control). */
  readonly absoluteEffect: number;
  /** absoluteEffect / baseline, when a baseline is known. */
  readonly relativeEffect: number | undefined;
  readonly treatmentRate: number | undefined;
  readonly alpha: number;
  readonly comparisons: number;
  readonly alphaPerComparison: number;
  readonly correction: MultipleComparisonCorrection;
  readonly ratio: number;
  readonly arms: number;
  /** 1 - rho^2. */
  readonly varianceFactor: number;
  readonly convention: TailConvention;
  readonly method: string;
}

export interface SampleSizePlan extends PlanBasis {
  /** Units in the control arm, rounded up. */
  readonly nPerArm: number;
  /** Units in each treatment arm, ceil(ratio * control). */
  readonly nTreatmentPerArm: number;
  /** The unrounded control-arm size from the root finder. */
  readonly exactNPerArm: number;
  readonly totalN: number;
  readonly days: number | undefined;
  readonly power: number;
}

export interface PowerPlan extends PlanBasis {
  readonly power: number;
  readonly nPerArm: number;
  readonly nTreatmentPerArm: number;
  readonly totalN: number;
  readonly days: number | undefined;
}

interface Resolved extends PlanBasis {
  readonly sdAdjusted: number | undefined;
  readonly baseline: number | undefined;
  readonly dailyTraffic: number | undefined;
}

function resolve(input: PlanInput): Resolved {
  const alpha = input.alpha ?? 0.05;
  requireOpenUnit("alpha", alpha);
  const ratio = input.ratio ?? 1;
  requirePositive("ratio", ratio);
  const arms = input.arms ?? 2;
  if (!Number.isInteger(arms) || arms < 2)
    throw new StatsInputError("arms", "an integer of at least 2", arms);
  const correction = input.correction ?? "bonferroni";
  const comparisons = arms - 1;
  const alphaPerComparison = correction === "bonferroni" ? alpha / comparisons : alpha;
  const rho = input.covariateCorrelation ?? 0;
  if (!Number.isFinite(rho) || rho <= -1 || rho >= 1) {
    throw new StatsInputError("covariateCorrelation", "strictly between -1 and 1", rho);
  }
  const varianceFactor = 1 - rho * rho;
  if (input.dailyTraffic !== undefined) requirePositive("dailyTraffic", input.dailyTraffic);
  const convention = input.convention ?? "upperTail";
  const common = {
    alpha,
    comparisons,
    alphaPerComparison,
    correction,
    ratio,
    arms,
    varianceFactor,
    convention,
    dailyTraffic: input.dailyTraffic,
  };
  const metric = input.metric;
  if (metric.kind === "proportion") {
    requireOpenUnit("baseline", metric.baseline);
    const absoluteEffect = effectFromRelative(metric.relativeEffect, metric.absoluteEffect, metric.baseline);
    const treatmentRate = metric.baseline + absoluteEffect;
    if (!(treatmentRate > 0 && treatmentRate < 1)) {
      throw new StatsInputError("baseline + effect", "strictly between 0 and 1", treatmentRate);
    }
    return {
      ...common,
      metricKind: "proportion",
      absoluteEffect,
      relativeEffect: absoluteEffect / metric.baseline,
      treatmentRate,
      sdAdjusted: undefined,
      baseline: metric.baseline,
      method: "two proportions, normal approximation (R power.prop.test formula)",
    };
  }
  requirePositive("sd", metric.sd);
  let absoluteEffect: number;
  if (metric.delta !== undefined) {
    requireFinite("delta", metric.delta);
    if (metric.delta === 0) throw new StatsInputError("delta", "non-zero", metric.delta);
    absoluteEffect = metric.delta;
  } else {
    if (metric.mean === undefined || metric.relativeEffect === undefined) {
      throw new StatsInputError("delta", "given (or a mean and a relative effect)", "nothing");
    }
    requireFinite("mean", metric.mean);
    absoluteEffect = effectFromRelative(metric.relativeEffect, undefined, metric.mean);
  }
  return {
    ...common,
    metricKind: "mean",
    absoluteEffect,
    relativeEffect: metric.mean === undefined ? undefined : absoluteEffect / metric.mean,
    treatmentRate: undefined,
    sdAdjusted: metric.sd * Math.sqrt(varianceFactor),
    baseline: metric.mean,
    method: "two-sample t-test, exact noncentral t (R power.t.test)",
  };
}

function effectFromRelative(
  relative: number | undefined,
  absolute: number | undefined,
  baseline: number,
): number {
  if (relative !== undefined && absolute !== undefined) {
    throw new StatsInputError("effect", "given once, relative or absolute", "both");
  }
  const effect = relative !== undefined ? relative * baseline : absolute;
  if (effect === undefined) throw new StatsInputError("effect", "given (relative or absolute)", "nothing");
  if (!Number.isFinite(effect) || effect === 0)
    throw new StatsInputError("effect", "a non-zero finite number", effect);
  return effect;
}

function basis(resolved: Resolved): PlanBasis {
  const { sdAdjusted: _sd, baseline: _baseline, dailyTraffic: _traffic, ...rest } = resolved;
  return rest;
}

function totals(resolved: Resolved, controlN: number) {
  const nTreatmentPerArm = Math.ceil(resolved.ratio * controlN - 1e-9);
  const totalN = controlN + resolved.comparisons * nTreatmentPerArm;
  const days = resolved.dailyTraffic === undefined ? undefined : Math.ceil(totalN / resolved.dailyTraffic);
  return { nTreatmentPerArm, totalN, days };
}

function powerOf(resolved: Resolved, n: number): number {
  if (resolved.metricKind === "proportion") {
    return twoProportionPower({
      p1: resolved.baseline as number,
      p2: resolved.treatmentRate as number,
      n,
      alpha: resolved.alphaPerComparison,
      ratio: resolved.ratio,
      convention: resolved.convention,
      varianceFactor: resolved.varianceFactor,
    });
  }
  return twoSampleTPower({
    delta: resolved.absoluteEffect,
    sd: resolved.sdAdjusted as number,
    n,
    alpha: resolved.alphaPerComparison,
    ratio: resolved.ratio,
    convention: resolved.convention,
  });
}

/** Units per arm, total units and days for the target power. */
export function planSampleSize(input: PlanInput & { readonly power?: number }): SampleSizePlan {
  const resolved = resolve(input);
  const power = input.power ?? 0.8;
  requireOpenUnit("power", power);
  if (power <= resolved.alpha) throw new StatsInputError("power", `above alpha (${resolved.alpha})`, power);
  const exactNPerArm =
    resolved.metricKind === "proportion"
      ? twoProportionSampleSize({
          p1: resolved.baseline as number,
          p2: resolved.treatmentRate as number,
          power,
          alpha: resolved.alphaPerComparison,
          ratio: resolved.ratio,
          convention: resolved.convention,
          varianceFactor: resolved.varianceFactor,
        })
      : twoSampleTSampleSize({
          delta: resolved.absoluteEffect,
          sd: resolved.sdAdjusted as number,
          power,
          alpha: resolved.alphaPerComparison,
          ratio: resolved.ratio,
          convention: resolved.convention,
        });
  // Round up so that the plan reaches at least the target power (1e-9 absorbs root-finder noise).
  const nPerArm = Math.max(2, Math.ceil(exactNPerArm - 1e-9));
  return { ...basis(resolved), exactNPerArm, nPerArm, ...totals(resolved, nPerArm), power };
}

/** The power of a plan with n units in the control arm. */
export function planPower(input: PlanInput & { readonly n: number }): PowerPlan {
  const resolved = resolve(input);
  if (!Number.isFinite(input.n) || input.n < 2) throw new StatsInputError("n", "at least 2", input.n);
  return {
    ...basis(resolved),
    power: powerOf(resolved, input.n),
    nPerArm: input.n,
    ...totals(resolved, input.n),
  };
}

/** absoluteEffect / relativeEffect are the smallest upward difference detected with the power. */
export interface MinimumDetectableEffectPlan extends PlanBasis {
  readonly power: number;
  readonly nPerArm: number;
}

/** The minimum detectable effect of a plan with n units in the control arm (upward effects). */
export function planMinimumDetectableEffect(
  input: Omit<PlanInput, "metric"> & {
    readonly metric:
      | { readonly kind: "proportion"; readonly baseline: number }
      | { readonly kind: "mean"; readonly sd: number; readonly mean?: number };
    readonly n: number;
    readonly power?: number;
  },
): MinimumDetectableEffectPlan {
  // Resolve the shared options with a placeholder effect, which the MDE search replaces.
  const placeholder: PlanMetric =
    input.metric.kind === "proportion"
      ? {
          kind: "proportion",
          baseline: input.metric.baseline,
          relativeEffect: 0.5 * (1 / input.metric.baseline - 1),
        }
      : { kind: "mean", sd: input.metric.sd, delta: input.metric.sd };
  const resolved = resolve({ ...input, metric: placeholder });
  const power = input.power ?? 0.8;
  requireOpenUnit("power", power);
  if (power <= resolved.alpha) throw new StatsInputError("power", `above alpha (${resolved.alpha})`, power);
  if (!Number.isFinite(input.n) || input.n < 2) throw new StatsInputError("n", "at least 2", input.n);
  const common = {
    n: input.n,
    power,
    alpha: resolved.alphaPerComparison,
    ratio: resolved.ratio,
    convention: resolved.convention,
  };
  const mde =
    input.metric.kind === "proportion"
      ? proportionMinimumDetectableEffect({
          ...common,
          baseline: input.metric.baseline,
          varianceFactor: resolved.varianceFactor,
        })
      : meanMinimumDetectableEffect({
          ...common,
          sd: resolved.sdAdjusted as number,
          ...(input.metric.mean === undefined ? {} : { mean: input.metric.mean }),
        });
  return {
    ...basis(resolved),
    absoluteEffect: mde.absolute,
    relativeEffect: mde.relative,
    treatmentRate: input.metric.kind === "proportion" ? input.metric.baseline + mde.absolute : undefined,
    power,
    nPerArm: input.n,
  };
}
