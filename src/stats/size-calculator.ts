/**
 * The `size` calculator as one request: which of sample size, power or minimum detectable effect
 * is asked for follows from what is given (shared by the CLI and the API so that both answer the
 * same question the same way).
 * - an effect and no n: sample size at the target power (default 0.8);
 * - an effect and n: the power of n units in the control arm;
 * - n and no effect: the minimum detectable effect at the target power.
 */
import { StatsInputError } from "./errors.ts";
import {
  type MinimumDetectableEffectPlan,
  type MultipleComparisonCorrection,
  type PlanInput,
  type PlanMetric,
  type PowerPlan,
  planMinimumDetectableEffect,
  planPower,
  planSampleSize,
  type SampleSizePlan,
} from "./sample-size-plan.ts";
import type { TailConvention } from "./sample-size-t.ts";

export interface SizeRequest {
  /** Conversion metric: baseline rate. */
  readonly baseline?: number;
  /** Relative minimum detectable effect (lift). */
  readonly mde?: number;
  /** Absolute minimum detectable effect. */
  readonly mdeAbsolute?: number;
  /** Continuous metric: per-unit standard deviation. */
  readonly sd?: number;
  /** Continuous metric: absolute difference in means. */
  readonly delta?: number;
  /** Continuous metric: baseline mean (for a relative mde). */
  readonly mean?: number;
  readonly alpha?: number;
  readonly power?: number;
  readonly n?: number;
  readonly ratio?: number;
  readonly arms?: number;
  readonly correction?: MultipleComparisonCorrection;
  /** Correlation rho with a pre-period covariate. */
  readonly varianceReduction?: number;
  readonly dailyTraffic?: number;
  readonly convention?: TailConvention;
}

export type SizeAnswer =
  | { readonly mode: "sampleSize"; readonly plan: SampleSizePlan }
  | { readonly mode: "power"; readonly plan: PowerPlan }
  | { readonly mode: "minimumDetectableEffect"; readonly plan: MinimumDetectableEffectPlan };

function defined<Key extends string, Value>(key: Key, value: Value | undefined): { [K in Key]?: Value } {
  return (value === undefined ? {} : { [key]: value }) as { [K in Key]?: Value };
}

export function sizeCalculator(request: SizeRequest): SizeAnswer {
  const { baseline, sd, mde, mdeAbsolute, delta, mean, n, power } = request;
  if ((baseline === undefined) === (sd === undefined)) {
    throw new StatsInputError(
      "metric",
      "either a baseline rate (conversion) or an sd (continuous metric)",
      "both or neither",
    );
  }
  const options: Omit<PlanInput, "metric"> = {
    ...defined("alpha", request.alpha),
    ...defined("ratio", request.ratio),
    ...defined("arms", request.arms),
    ...defined("covariateCorrelation", request.varianceReduction),
    ...defined("dailyTraffic", request.dailyTraffic),
    ...defined("correction", request.correction),
    ...defined("convention", request.convention),
  };
  const hasEffect = mde !== undefined || mdeAbsolute !== undefined || delta !== undefined;
  if (!hasEffect) {
    if (n === undefined)
      throw new StatsInputError("effect", "given (mde, mdeAbsolute or delta), or n for the MDE", "nothing");
    const metric =
      baseline !== undefined
        ? ({ kind: "proportion", baseline } as const)
        : ({ kind: "mean", sd: sd as number, ...defined("mean", mean) } as const);
    return {
      mode: "minimumDetectableEffect",
      plan: planMinimumDetectableEffect({ ...options, metric, n, ...defined("power", power) }),
    };
  }
  let metric: PlanMetric;
  if (baseline !== undefined) {
    if (delta !== undefined)
      throw new StatsInputError("delta", "absent for a conversion metric (use mde or mdeAbsolute)", delta);
    metric = {
      kind: "proportion",
      baseline,
      ...defined("relativeEffect", mde),
      ...defined("absoluteEffect", mdeAbsolute),
    };
  } else {
    if (delta !== undefined && mdeAbsolute !== undefined) {
      throw new StatsInputError("delta", "given once (delta or mdeAbsolute)", "both");
    }
    const effect = delta ?? mdeAbsolute;
    if (mde !== undefined && effect !== undefined)
      throw new StatsInputError("mde", "absent when delta is given", mde);
    if (mde !== undefined && mean === undefined)
      throw new StatsInputError("mean", "given for a relative mde on a continuous metric", "nothing");
    metric = {
      kind: "mean",
      sd: sd as number,
      ...defined("delta", effect),
      ...defined("mean", mean),
      ...defined("relativeEffect", mde),
    };
  }
  if (n !== undefined) {
    if (power !== undefined)
      throw new StatsInputError("power", "absent when n is given with an effect (n gives the power)", power);
    return { mode: "power", plan: planPower({ ...options, metric, n }) };
  }
  return { mode: "sampleSize", plan: planSampleSize({ ...options, metric, ...defined("power", power) }) };
}

/** A size answer as one JSON-ready document: the asked-for figures first, then the plan (null for absent values). */
export function sizeDocument(answer: SizeAnswer): Record<string, unknown> {
  const plan = withNulls(answer.plan);
  // `days` is present only when the daily traffic was given.
  if (plan.days === null) delete plan.days;
  if (answer.mode === "minimumDetectableEffect") {
    return {
      mode: answer.mode,
      minimumDetectableEffect: {
        absolute: answer.plan.absoluteEffect,
        relative: answer.plan.relativeEffect ?? null,
      },
      ...plan,
    };
  }
  if (answer.mode === "power") return { mode: answer.mode, power: answer.plan.power, ...plan };
  const { nPerArm, totalN, days } = answer.plan;
  return { mode: answer.mode, nPerArm, totalN, ...(days === undefined ? {} : { days }), ...plan };
}

/** JSON has no undefined: absent values become null so that every key is always present. */
function withNulls(record: object): Record<string, unknown> {
  return Object.fromEntries(
    Object.entries(record).map(([key, value]) => [key, value === undefined ? null : value]),
  );
}
