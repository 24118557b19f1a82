/**
 * Positive predictive value of a claimed finding with bias, Ioannidis (2005), "Why Most
 * Published Research Findings Are False", PLoS Med 2:e124:
 * PPV = ([1 - beta] R + u beta R) / (R + alpha - beta R + u - u alpha + u beta R),
 * with R the pre-study odds of a true relationship and u the share of analyses that would not
 * have been findings but are reported as such (bias). With u = 0 it is 1 minus the false
 * discovery rate of a rejection at level alpha.
 * Example: positivePredictiveValue({ preStudyOdds: 1, alpha: 0.05, power: 0.8, bias: 0.1 })
 * -> 0.8497409326424871 (Ioannidis 2005 Table 4, first row: 0.85).
 */
import { requireOpenUnit, requirePositive, requireUnitInterval } from "./errors.ts";

export interface PositivePredictiveValueInput {
  /** R: odds of a true relationship among those probed. */
  readonly preStudyOdds: number;
  readonly alpha: number;
  readonly power: number;
  /** u in [0, 1]; default 0. */
  readonly bias?: number;
}

export function positivePredictiveValue(input: PositivePredictiveValueInput): number {
  requirePositive("preStudyOdds", input.preStudyOdds);
  requireOpenUnit("alpha", input.alpha);
  requireOpenUnit("power", input.power);
  const bias = input.bias ?? 0;
  requireUnitInterval("bias", bias);
  const odds = input.preStudyOdds;
  const beta = 1 - input.power;
  const numerator = input.power * odds + bias * beta * odds;
  const denominator = odds + input.alpha - beta * odds + bias - bias * input.alpha + bias * beta * odds;
  return numerator / denominator;
}
