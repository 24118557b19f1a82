import type { EffectPrior } from "./effect-prior.ts";
import { requirePositive, requireUnitInterval, StatsInputError } from "./errors.ts";

export type PriorShape = "normal" | "fat";

export interface AssumedPriorInput {
  /** pi = P(real win). */
  readonly winRate: number;
  /** lambda = P(real loss); defaults to the win rate. */
  readonly lossRate?: number;
  /** sigma: the scale of the size of a real win or loss (relative lift). */
  readonly effectScale: number;
  /** `normal`: half-normal sizes; `fat`: half-t sizes with 3 df (statistics.md section 7). */
  readonly shape?: PriorShape;
}

/** Degrees of freedom of the fat-tailed shape, as statistics.md section 7 defines it. */
export const fatShapeDegreesOfFreedom = 3;

/**
 * An assumed prior for a young program or a what-if: null share 1 - pi - lambda, real wins
 * and losses with half-normal (or half-t, 3 df) sizes of scale sigma. statistics.md section 7.
 */
export function assumedPrior(input: AssumedPriorInput): EffectPrior {
  const lossRate = input.lossRate ?? input.winRate;
  requireUnitInterval("winRate", input.winRate);
  requireUnitInterval("lossRate", lossRate);
  requirePositive("effectScale", input.effectScale);
  if (input.winRate + lossRate > 1) {
    throw new StatsInputError("winRate + lossRate", "at most 1", input.winRate + lossRate);
  }
  const shape = input.shape ?? "normal";
  const size = (sign: 1 | -1) =>
    shape === "normal"
      ? ({ kind: "halfNormal", sign, scale: input.effectScale } as const)
      : ({ kind: "halfT", sign, scale: input.effectScale, df: fatShapeDegreesOfFreedom } as const);
  const components = [
    { component: { kind: "point", at: 0 } as const, weight: 1 - input.winRate - lossRate },
    { component: size(1), weight: input.winRate },
    { component: size(-1), weight: lossRate },
  ].filter((entry) => entry.weight > 0);
  return { family: "assumed", components };
}
