/**
 * The caliper test for bunching of results just past a decision threshold (Gerber & Malhotra
 * 2008, "Do Statistical Reporting Standards Affect What Is Published? Publication Bias in Two
 * Leading Political Science Journals", QJPS 3:313), and the exact binomial test it rests on.
 *
 * Among the z-statistics that fall within a narrow band around the critical value, about as many
 * should land just below as just above it when nothing pushes results over the line; an excess
 * above is the mark of peeking, early stopping or re-analysis until significant. The band is
 * `[criticalZ (1 - width), criticalZ)` below and `[criticalZ, criticalZ (1 + width)]` above, the
 * caliper width being a share of the critical value as in the paper (which reports 5, 10, 15 and
 * 20 % calipers). Wins ship on the upper tail only (statistics.md section 0), so the test uses the
 * signed z = y / s, not |z| as the paper did for two-sided reporting.
 *
 * Example: caliperTest(z, { criticalZ: 1.959964, width: 0.1 }) with 14 above and 5 below gives
 * pValue = binom.test(14, 19, 0.5, alternative = "greater")$p.value = 0.03178...
 */
import {
  binomialLowerTail,
  binomialProbability,
  binomialUpperTail,
  clopperPearsonInterval,
} from "./clopper-pearson.ts";
import { requireFinite, requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";

export type BinomialAlternative = "two-sided" | "greater" | "less";

export interface BinomialTestResult {
  readonly successes: number;
  readonly trials: number;
  readonly hypothesizedProbability: number;
  readonly alternative: BinomialAlternative;
  readonly estimate: number;
  readonly pValue: number;
}

/**
 * Exact binomial test of H0: p = probability, as R `binom.test`. The two-sided p-value sums the
 * probabilities of all outcomes no more likely than the one observed, with R's relative
 * allowance of 1e-7 for ties in floating point.
 */
export function exactBinomialTest(
  successes: number,
  trials: number,
  probability = 0.5,
  alternative: BinomialAlternative = "two-sided",
): BinomialTestResult {
  if (!Number.isInteger(trials) || trials < 1)
    throw new StatsInputError("trials", "a positive integer", trials);
  if (!Number.isInteger(successes) || successes < 0 || successes > trials) {
    throw new StatsInputError("successes", `an integer between 0 and trials (${trials})`, successes);
  }
  requireOpenUnit("probability", probability);
  const n = trials;
  const x = successes;
  let pValue: number;
  if (alternative === "greater") pValue = binomialUpperTail(x, n, probability);
  else if (alternative === "less") pValue = binomialLowerTail(x, n, probability);
  else {
    const relativeAllowance = 1 + 1e-7;
    const observed = binomialProbability(x, n, probability);
    const mean = n * probability;
    if (x === mean) pValue = 1;
    else if (x < mean) {
      let asLikely = 0;
      for (let i = Math.ceil(mean); i <= n; i++) {
        if (binomialProbability(i, n, probability) <= observed * relativeAllowance) asLikely++;
      }
      pValue = binomialLowerTail(x, n, probability) + binomialUpperTail(n - asLikely + 1, n, probability);
    } else {
      let asLikely = 0;
      for (let i = 0; i <= Math.floor(mean); i++) {
        if (binomialProbability(i, n, probability) <= observed * relativeAllowance) asLikely++;
      }
      pValue = binomialLowerTail(asLikely - 1, n, probability) + binomialUpperTail(x, n, probability);
    }
  }
  return {
    successes: x,
    trials: n,
    hypothesizedProbability: probability,
    alternative,
    estimate: x / n,
    pValue: Math.min(1, Math.max(0, pValue)),
  };
}

export interface CaliperOptions {
  /** The critical z of the launch rule, e.g. 1.959964 for a two-sided 5 % test shipped on the upper tail. */
  readonly criticalZ: number;
  /** Half-width of the band as a share of criticalZ (default 0.1, a 10 % caliper). */
  readonly width?: number;
}

export interface CaliperTestResult {
  readonly criticalZ: number;
  readonly width: number;
  /** The z-range counted below the threshold: [lower, criticalZ). */
  readonly bandBelow: { readonly lower: number; readonly upper: number };
  /** The z-range counted above the threshold: [criticalZ, upper]. */
  readonly bandAbove: { readonly lower: number; readonly upper: number };
  readonly above: number;
  readonly below: number;
  readonly total: number;
  /** above / total, with its Clopper-Pearson 95 % interval (NaN when the band is empty). */
  readonly shareAbove: number;
  readonly shareAboveInterval: { readonly lower: number; readonly upper: number };
  /** One-sided exact binomial p-value for an excess above (H0: P(above) = 1/2). */
  readonly pValue: number;
  /** Two-sided exact binomial p-value. */
  readonly pValueTwoSided: number;
  readonly method: string;
}

/** Caliper test on signed z-statistics (Gerber & Malhotra 2008). */
export function caliperTest(zValues: readonly number[], options: CaliperOptions): CaliperTestResult {
  const { criticalZ } = options;
  const width = options.width ?? 0.1;
  requirePositive("criticalZ", criticalZ);
  requireOpenUnit("width", width);
  const lower = criticalZ * (1 - width);
  const upper = criticalZ * (1 + width);
  let above = 0;
  let below = 0;
  for (const [index, z] of zValues.entries()) {
    requireFinite(`zValues[${index}]`, z);
    if (z >= criticalZ && z <= upper) above++;
    else if (z >= lower && z < criticalZ) below++;
  }
  const total = above + below;
  const oneSided = total > 0 ? exactBinomialTest(above, total, 0.5, "greater").pValue : Number.NaN;
  const twoSided = total > 0 ? exactBinomialTest(above, total, 0.5, "two-sided").pValue : Number.NaN;
  const interval =
    total > 0 ? clopperPearsonInterval(above, total) : { lower: Number.NaN, upper: Number.NaN };
  return {
    criticalZ,
    width,
    bandBelow: { lower, upper: criticalZ },
    bandAbove: { lower: criticalZ, upper },
    above,
    below,
    total,
    shareAbove: total > 0 ? above / total : Number.NaN,
    shareAboveInterval: { lower: interval.lower, upper: interval.upper },
    pValue: oneSided,
    pValueTwoSided: twoSided,
    method: `caliper test (Gerber & Malhotra 2008): exact binomial count of z in [${round(lower)}, ${round(criticalZ)}) vs [${round(criticalZ)}, ${round(upper)}], a ${Math.round(width * 100)} % caliper`,
  };
}

function round(value: number): string {
  return value.toFixed(3);
}
