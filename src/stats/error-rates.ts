/**
 * Error rates of a design seen as a classifier of ideas: from the win rate pi (prior share of
 * real wins), the two-sided level alpha and the power 1 - beta at the effects that count.
 * statistics.md section 2. Sources: Kohavi, Deng & Vermeer (2022), "A/B Testing Intuition
 * Busters", KDD (false positive risk, wins only, false-win rate alpha/2); Colquhoun (2014),
 * R. Soc. Open Sci. 1:140216 (the 1,000-test tree, any rejection counted at alpha).
 * Example: designErrorRates({ winRate: 0.1, alpha: 0.05, power: 0.8 }).falsePositiveRisk
 * -> 0.21951219512195122 (Kohavi et al. 2022: 22.0 %).
 */
import { requireOpenUnit, StatsInputError } from "./errors.ts";

export interface ErrorRatesInput {
  /** pi: prior share of tested ideas that are real wins. */
  readonly winRate: number;
  /** Two-sided significance level. */
  readonly alpha: number;
  /** Power at the effect sizes that count. */
  readonly power: number;
  /** How many tests the expected confusion matrix is for (default 1000). */
  readonly tests?: number;
}

/** Expected counts among N tests, rejection = significant in either direction (alpha counted fully). */
export interface ExpectedConfusion {
  readonly tests: number;
  readonly realEffects: number;
  readonly nullEffects: number;
  readonly truePositives: number;
  readonly falsePositives: number;
  readonly falseNegatives: number;
  readonly trueNegatives: number;
  /** falsePositives / (truePositives + falsePositives). */
  readonly falseDiscoveryRate: number;
}

export interface ErrorRates {
  /** Share of significant wins that are not real: a(1-pi) / (a(1-pi) + (1-beta)pi), a = alpha/2. */
  readonly falsePositiveRisk: number;
  /** Share of non-wins that were real wins: beta pi / (beta pi + (1-a)(1-pi)), a = alpha/2. */
  readonly falseOmissionRisk: number;
  /** Share of rejections (either side, alpha counted fully) that are wrong. */
  readonly errorGivenRejection: number;
  /** Share of non-rejections (alpha counted fully) that miss a real effect. */
  readonly errorGivenNoRejection: number;
  readonly confusion: ExpectedConfusion;
}

export const defaultConfusionTests = 1000;

function validate(input: ErrorRatesInput): number {
  requireOpenUnit("winRate", input.winRate);
  requireOpenUnit("alpha", input.alpha);
  requireOpenUnit("power", input.power);
  if (input.power <= input.alpha / 2) {
    throw new StatsInputError("power", `above the false-win rate alpha/2 = ${input.alpha / 2}`, input.power);
  }
  const tests = input.tests ?? defaultConfusionTests;
  if (!Number.isFinite(tests) || tests <= 0) throw new StatsInputError("tests", "a positive number", tests);
  return tests;
}

/** The error rates of a design and its expected confusion matrix. */
export function designErrorRates(input: ErrorRatesInput): ErrorRates {
  const tests = validate(input);
  const { winRate, alpha, power } = input;
  const miss = 1 - power;
  const falseWinRate = alpha / 2;
  const nullShare = 1 - winRate;
  const falsePositiveRisk = (falseWinRate * nullShare) / (falseWinRate * nullShare + power * winRate);
  const falseOmissionRisk = (miss * winRate) / (miss * winRate + (1 - falseWinRate) * nullShare);
  const errorGivenRejection = (alpha * nullShare) / (alpha * nullShare + power * winRate);
  const errorGivenNoRejection = (miss * winRate) / (miss * winRate + (1 - alpha) * nullShare);
  const realEffects = tests * winRate;
  const nullEffects = tests * nullShare;
  const truePositives = realEffects * power;
  const falsePositives = nullEffects * alpha;
  return {
    falsePositiveRisk,
    falseOmissionRisk,
    errorGivenRejection,
    errorGivenNoRejection,
    confusion: {
      tests,
      realEffects,
      nullEffects,
      truePositives,
      falsePositives,
      falseNegatives: realEffects - truePositives,
      trueNegatives: nullEffects - falsePositives,
      falseDiscoveryRate: falsePositives / (truePositives + falsePositives),
    },
  };
}
