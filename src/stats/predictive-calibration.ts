/**
 * Calibration of the posterior predictive against realized measurements (holdouts, re-tests).
 *
 * A realized measurement r_i of test i, with standard error t_i, is predicted by
 * `theta_i | y_i` convolved with N(0, t_i^2) (statistics.md section 6). For each we report the
 * probability integral transform u_i = F_i(r_i) (Dawid 1984, "Statistical theory: the prequential
 * approach", JRSS A 147:278; uniform when the predictive is calibrated) and whether r_i falls in the
 * central 80 % and 95 % predictive intervals, which for a continuous F_i is 0.1 <= u_i <= 0.9 and
 * 0.025 <= u_i <= 0.975 (Gneiting, Balabdaoui & Raftery 2007, JRSS B 69:243, on PIT and coverage).
 *
 * The fitted realization ratio is the weighted least-squares slope through the origin of realized
 * on claimed, `k = sum(y r / t^2) / sum(y^2 / t^2)`, SE `1 / sqrt(sum y^2 / t^2)` (the realized
 * noise alone; claimed values taken as fixed), with a normal interval; the posterior predicts
 * `sum E[theta | y] y / t^2 / sum y^2 / t^2` for the same weights, shown beside it.
 *
 * Posterior components are point masses, normals, truncated normals and half-normals (the exact
 * posteriors of posterior.ts); other kinds give NaN. A truncated normal convolved with a normal has no simple
 * closed form; it is integrated by composite Simpson over the truncated support (at least 512 intervals, each
 * at most a sixteenth of the smaller of the two scales, capped at 8000).
 */
import { normalCdf, normalPdf, normalQuantile } from "./distributions.ts";
import type { PriorComponent, WeightedComponent } from "./effect-prior.ts";
import { requireFinite, requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";

/** Posterior components the predictive handles in closed form or by quadrature. */
type TruncatedNormal = Extract<PriorComponent, { kind: "truncatedNormal" }>;

const simpsonIntervals = 512;

function truncatedNormalConvolvedCdf(component: TruncatedNormal, noiseScale: number, value: number): number {
  const { mean, scale } = component;
  // Mass beyond 12 sd is below 1e-32; clipping keeps the quadrature on the support that matters.
  const lower = Math.max(component.lower, mean - 12 * scale);
  const upper = Math.min(component.upper, mean + 12 * scale);
  if (!(upper > lower)) {
    const at = Math.min(Math.max(mean, component.lower), component.upper);
    return normalCdf((value - at) / noiseScale);
  }
  // The step must resolve the noise cdf as well as the density: at most a sixteenth of either scale.
  const steps =
    2 *
    Math.ceil(
      Math.min(8000, Math.max(simpsonIntervals, (upper - lower) / (Math.min(scale, noiseScale) / 16))) / 2,
    );
  const width = (upper - lower) / steps;
  let weighted = 0;
  let mass = 0;
  for (let j = 0; j <= steps; j++) {
    const theta = lower + j * width;
    const coefficient = j === 0 || j === steps ? 1 : j % 2 === 1 ? 4 : 2;
    const density = normalPdf((theta - mean) / scale);
    mass += coefficient * density;
    weighted += coefficient * density * normalCdf((value - theta) / noiseScale);
  }
  return mass > 0 ? weighted / mass : normalCdf((value - mean) / noiseScale);
}

function componentPredictiveCdf(component: PriorComponent, noiseScale: number, value: number): number {
  switch (component.kind) {
    case "point":
      return normalCdf((value - component.at) / noiseScale);
    case "normal":
      return normalCdf((value - component.mean) / Math.hypot(component.scale, noiseScale));
    case "truncatedNormal":
      return truncatedNormalConvolvedCdf(component, noiseScale, value);
    case "halfNormal": {
      const support = component.sign === 1 ? [0, Number.POSITIVE_INFINITY] : [Number.NEGATIVE_INFINITY, 0];
      return truncatedNormalConvolvedCdf(
        {
          kind: "truncatedNormal",
          mean: 0,
          scale: component.scale,
          lower: support[0] as number,
          upper: support[1] as number,
        },
        noiseScale,
        value,
      );
    }
    default:
      // Uniform and half-t components never appear in an exact posterior (posterior.ts).
      return Number.NaN;
  }
}

/** F(value) for theta ~ posterior mixture, plus independent N(0, noiseScale^2). A kernel. */
export function predictiveCdf(
  posterior: readonly WeightedComponent[],
  noiseScale: number,
  value: number,
): number {
  if (!(noiseScale > 0) || Number.isNaN(value)) return Number.NaN;
  let total = 0;
  let weights = 0;
  for (const { component, weight } of posterior) {
    if (weight <= 0) continue;
    weights += weight;
    const part = componentPredictiveCdf(component, noiseScale, value);
    if (Number.isNaN(part)) return Number.NaN;
    total += weight * part;
  }
  return weights > 0 ? total / weights : Number.NaN;
}

/** Mean and variance of the posterior mixture (for brackets and display). */
function mixtureMoments(posterior: readonly WeightedComponent[]): {
  mean: number;
  variance: number;
} {
  let weights = 0;
  let first = 0;
  let second = 0;
  for (const { component, weight } of posterior) {
    if (weight <= 0) continue;
    let mean: number;
    let variance: number;
    if (component.kind === "point") {
      mean = component.at;
      variance = 0;
    } else if (component.kind === "normal") {
      mean = component.mean;
      variance = component.scale ** 2;
    } else if (component.kind === "truncatedNormal") {
      const alpha = (component.lower - component.mean) / component.scale;
      const beta = (component.upper - component.mean) / component.scale;
      const mass = Math.max(normalCdf(beta) - normalCdf(alpha), 1e-300);
      const pdfAlpha = Number.isFinite(alpha) ? normalPdf(alpha) : 0;
      const pdfBeta = Number.isFinite(beta) ? normalPdf(beta) : 0;
      const shift = (pdfAlpha - pdfBeta) / mass;
      mean = component.mean + component.scale * shift;
      const alphaTerm = Number.isFinite(alpha) ? alpha * pdfAlpha : 0;
      const betaTerm = Number.isFinite(beta) ? beta * pdfBeta : 0;
      variance = Math.max(0, component.scale ** 2 * (1 + (alphaTerm - betaTerm) / mass - shift * shift));
    } else return { mean: Number.NaN, variance: Number.NaN };
    weights += weight;
    first += weight * mean;
    second += weight * (variance + mean * mean);
  }
  const mean = first / weights;
  return { mean, variance: Math.max(0, second / weights - mean * mean) };
}

/** The central predictive interval at `level`, by bisection on the predictive cdf. */
export function predictiveInterval(
  posterior: readonly WeightedComponent[],
  noiseScale: number,
  level: number,
): { lower: number; upper: number; level: number } {
  requirePositive("noiseScale", noiseScale);
  requireOpenUnit("level", level);
  const { mean, variance } = mixtureMoments(posterior);
  const spread = Math.sqrt(variance + noiseScale * noiseScale);
  const solve = (probability: number): number => {
    // Chebyshev-style bracket: the quantile lies within mean +- spread / sqrt(min tail).
    const reach = spread * (4 + Math.abs(normalQuantile(probability))) * 4;
    let low = mean - reach;
    let high = mean + reach;
    for (let i = 0; i < 100 && high - low > 1e-12 * (1 + Math.abs(mean)); i++) {
      const middle = 0.5 * (low + high);
      if (predictiveCdf(posterior, noiseScale, middle) < probability) low = middle;
      else high = middle;
    }
    return 0.5 * (low + high);
  };
  const tail = (1 - level) / 2;
  return { lower: solve(tail), upper: solve(1 - tail), level };
}

export interface RealizedComparison {
  /** The test's claimed lift y_i. */
  readonly claimed: number;
  /** Posterior mean E[theta_i | y_i] (the shrunk lift). */
  readonly shrunk: number;
  /** The posterior of theta_i | y_i as a mixture. */
  readonly posterior: readonly WeightedComponent[];
  /** The realized estimate r_i and its standard error t_i. */
  readonly realized: number;
  readonly realizedStandardError: number;
}

export interface CoverageSummary {
  readonly level: number;
  readonly covered: number;
  readonly count: number;
  readonly share: number;
}

export interface PredictiveCalibration {
  readonly count: number;
  /** PIT value of each comparison, in input order. */
  readonly pit: readonly number[];
  /** Counts of PIT values in ten equal bins on [0, 1]. */
  readonly pitHistogram: readonly number[];
  readonly coverage80: CoverageSummary;
  readonly coverage95: CoverageSummary;
  /** Weighted least-squares slope of realized on claimed, with a normal interval. */
  readonly realizationRatio: {
    readonly estimate: number;
    readonly standardError: number;
    readonly interval: { readonly lower: number; readonly upper: number; readonly level: number };
  };
  /** The same slope with the shrunk lifts in place of realized ones: what the posterior predicts. */
  readonly predictedRealizationRatio: number;
  readonly method: string;
}

function coverage(pit: readonly number[], level: number): CoverageSummary {
  const tail = (1 - level) / 2;
  const covered = pit.filter((u) => u >= tail && u <= 1 - tail).length;
  return { level, covered, count: pit.length, share: pit.length > 0 ? covered / pit.length : Number.NaN };
}

/** PIT values, 80/95 % coverage and the fitted realization ratio for realized measurements. */
export function predictiveCalibration(
  comparisons: readonly RealizedComparison[],
  options: { readonly level?: number } = {},
): PredictiveCalibration {
  const level = options.level ?? 0.95;
  requireOpenUnit("level", level);
  if (comparisons.length === 0) throw new StatsInputError("comparisons", "a non-empty list", 0);
  const pit: number[] = [];
  let claimedSquares = 0;
  let claimedRealized = 0;
  let claimedShrunk = 0;
  for (const [index, item] of comparisons.entries()) {
    requireFinite(`comparisons[${index}].claimed`, item.claimed);
    requireFinite(`comparisons[${index}].realized`, item.realized);
    requirePositive(`comparisons[${index}].realizedStandardError`, item.realizedStandardError);
    pit.push(predictiveCdf(item.posterior, item.realizedStandardError, item.realized));
    const precision = 1 / item.realizedStandardError ** 2;
    claimedSquares += item.claimed * item.claimed * precision;
    claimedRealized += item.claimed * item.realized * precision;
    claimedShrunk += item.claimed * item.shrunk * precision;
  }
  const histogram = new Array<number>(10).fill(0);
  for (const u of pit) {
    const bin = Math.min(9, Math.max(0, Math.floor(u * 10)));
    histogram[bin] = (histogram[bin] as number) + 1;
  }
  const estimate = claimedSquares > 0 ? claimedRealized / claimedSquares : Number.NaN;
  const standardError = claimedSquares > 0 ? 1 / Math.sqrt(claimedSquares) : Number.NaN;
  const z = normalQuantile(1 - (1 - level) / 2);
  return {
    count: comparisons.length,
    pit,
    pitHistogram: histogram,
    coverage80: coverage(pit, 0.8),
    coverage95: coverage(pit, 0.95),
    realizationRatio: {
      estimate,
      standardError,
      interval: { lower: estimate - z * standardError, upper: estimate + z * standardError, level },
    },
    predictedRealizationRatio: claimedSquares > 0 ? claimedShrunk / claimedSquares : Number.NaN,
    method:
      "PIT of realized under posterior convolved with N(0, realized SE^2); coverage = share of PIT in [0.1, 0.9] and [0.025, 0.975]; realization ratio = WLS slope of realized on claimed through the origin, weights 1/SE^2",
  };
}
