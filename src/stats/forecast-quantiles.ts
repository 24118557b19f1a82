/**
 * Summary of simulated draws for the backlog forecast: mean, standard deviation, Monte Carlo
 * standard error of the mean (sd / sqrt(R)) and the 5, 25, 50, 75 and 95 % quantiles.
 * Quantiles follow R's default, type 7 (Hyndman & Fan 1996, "Sample quantiles in statistical
 * packages", Am. Stat. 50:361): linear interpolation between order statistics at h = (R-1) p.
 * Sorting a typed array copy is O(R log R) and allocates one array per summary.
 *
 * Example: drawSummary(Float64Array.of(1, 2, 3, 4)).quantiles.p25 === 1.75 (R: quantile(1:4, .25)).
 */

export interface ForecastQuantiles {
  readonly p5: number;
  readonly p25: number;
  readonly p50: number;
  readonly p75: number;
  readonly p95: number;
}

export interface DrawSummary {
  readonly mean: number;
  readonly standardDeviation: number;
  /** Standard error of `mean` from the simulation itself: standardDeviation / sqrt(draws). */
  readonly monteCarloError: number;
  readonly quantiles: ForecastQuantiles;
}

export const forecastQuantileProbabilities = [0.05, 0.25, 0.5, 0.75, 0.95] as const;

/** Type-7 quantile of an ascending array; NaN for an empty one. */
export function sortedQuantile(sorted: Float64Array, probability: number): number {
  const count = sorted.length;
  if (count === 0) return Number.NaN;
  const position = (count - 1) * probability;
  const lower = Math.floor(position);
  const fraction = position - lower;
  const low = sorted[lower]!;
  if (fraction === 0 || lower + 1 >= count) return low;
  return low + fraction * (sorted[lower + 1]! - low);
}

/** Mean, sd (divisor R - 1), Monte Carlo error and quantiles of the draws (not mutated). */
export function drawSummary(draws: Float64Array): DrawSummary {
  const count = draws.length;
  let sum = 0;
  for (let index = 0; index < count; index++) sum += draws[index]!;
  const mean = count > 0 ? sum / count : Number.NaN;
  // Two-pass variance: the draws can be large totals with small spread.
  let squares = 0;
  for (let index = 0; index < count; index++) {
    const deviation = draws[index]! - mean;
    squares += deviation * deviation;
  }
  const standardDeviation = count > 1 ? Math.sqrt(squares / (count - 1)) : 0;
  const sorted = Float64Array.from(draws).sort();
  return {
    mean,
    standardDeviation,
    monteCarloError: count > 0 ? standardDeviation / Math.sqrt(count) : Number.NaN,
    quantiles: {
      p5: sortedQuantile(sorted, 0.05),
      p25: sortedQuantile(sorted, 0.25),
      p50: sortedQuantile(sorted, 0.5),
      p75: sortedQuantile(sorted, 0.75),
      p95: sortedQuantile(sorted, 0.95),
    },
  };
}
