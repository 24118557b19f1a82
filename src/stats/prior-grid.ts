/**
 * Default component grids of the three fitted families (statistics.md section 5).
 *
 * Scale grid (Stephens 2017, "False discovery rates: a new deal", Biostatistics 18:275; the
 * convention of ashr's autoselect.mixsd, recalled from memory): sigma_min = min(s)/10,
 * sigma_max = 2 sqrt(max(y^2 - s^2)) (8 sigma_min when no y^2 exceeds its s^2), and the points
 * sigma_max * sqrt(2)^(-j), j = 0..J with J = ceil(log(sigma_max/sigma_min) / log(sqrt(2))), so the
 * grid is anchored at sigma_max and its smallest point lies at or just below sigma_min.
 * - symmetric: point mass at 0 + N(0, sigma_j^2) for every grid point
 * - skewed: point mass at 0 + Uniform[0, a_j] and Uniform[-a_j, 0] on the same grid
 * - grid: point mass at 0 + point masses on an equally spaced theta grid over [min y, max y]
 *   (Koenker & Mizera 2014, JASA 109:674, use a fine equally spaced grid on the range of the data;
 *   300 points is the default of REBayes::GLmix, recalled from memory).
 * Components are listed null first, then by increasing scale (or theta).
 */
import type { PriorComponent } from "./effect-prior.ts";

export const scaleGridMultiplier = Math.SQRT2;

/** Default number of theta points of the `grid` family. */
export const defaultThetaGridPoints = 300;

/**
 * The grid family's likelihood matrix has N x points doubles; beyond this many cells the number of
 * points is reduced (never below minimumThetaGridPoints) so that a million results stay well
 * under 1 GiB.
 */
export const maximumThetaGridCells = 40_000_000;
export const minimumThetaGridPoints = 40;

export interface SummaryColumns {
  readonly y: ArrayLike<number>;
  readonly s: ArrayLike<number>;
}

/** The geometric scale grid, ascending. */
export function defaultScaleGrid(data: SummaryColumns): Float64Array {
  let minimumSe = Number.POSITIVE_INFINITY;
  let maximumExcess = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < data.y.length; i++) {
    const y = data.y[i] as number;
    const s = data.s[i] as number;
    if (s < minimumSe) minimumSe = s;
    const excess = y * y - s * s;
    if (excess > maximumExcess) maximumExcess = excess;
  }
  const sigmaMin = minimumSe / 10;
  let sigmaMax = maximumExcess > 0 ? 2 * Math.sqrt(maximumExcess) : 8 * sigmaMin;
  if (sigmaMax < sigmaMin) sigmaMax = 8 * sigmaMin;
  const steps = Math.ceil(Math.log(sigmaMax / sigmaMin) / Math.log(scaleGridMultiplier) - 1e-12);
  const grid = new Float64Array(steps + 1);
  for (let j = 0; j <= steps; j++) grid[steps - j] = sigmaMax * scaleGridMultiplier ** -j;
  return grid;
}

const nullComponent: PriorComponent = { kind: "point", at: 0 };

export function symmetricComponents(data: SummaryColumns): PriorComponent[] {
  const components: PriorComponent[] = [nullComponent];
  for (const scale of defaultScaleGrid(data)) components.push({ kind: "normal", mean: 0, scale });
  return components;
}

/** Null, then for each grid point a_j: Uniform[-a_j, 0] and Uniform[0, a_j]. */
export function skewedComponents(data: SummaryColumns): PriorComponent[] {
  const components: PriorComponent[] = [nullComponent];
  for (const bound of defaultScaleGrid(data)) {
    components.push({ kind: "uniform", lower: -bound, upper: 0 });
    components.push({ kind: "uniform", lower: 0, upper: bound });
  }
  return components;
}

/** Null, then `points` equally spaced thetas over [min y, max y] (zero itself excluded: it is the null). */
export function thetaGridComponents(data: SummaryColumns, points?: number): PriorComponent[] {
  const count = points ?? defaultThetaGridPointCount(data.y.length);
  let lowest = 0;
  let highest = 0;
  for (let i = 0; i < data.y.length; i++) {
    const y = data.y[i] as number;
    if (y < lowest) lowest = y;
    if (y > highest) highest = y;
  }
  const components: PriorComponent[] = [nullComponent];
  if (highest === lowest) return components;
  const step = (highest - lowest) / (count - 1);
  for (let j = 0; j < count; j++) {
    const at = lowest + j * step;
    // A grid point within a hair of zero would duplicate the null and split its weight arbitrarily.
    if (Math.abs(at) > step * 1e-6) components.push({ kind: "point", at });
  }
  return components;
}

export function defaultThetaGridPointCount(observationCount: number): number {
  const affordable = Math.floor(maximumThetaGridCells / Math.max(observationCount, 1));
  return Math.max(minimumThetaGridPoints, Math.min(defaultThetaGridPoints, affordable));
}
