/**
 * Posterior probabilities and means of many results under one prior, without credible intervals:
 * the batch kernel behind sums over a whole program (expected false wins, sign errors, realized
 * lift, missed wins) evaluated once per prior, e.g. under each bootstrap refit. The figures are the
 * same as posteriorOf's (posterior.ts) but skip the quantile search that intervals need, which is
 * most of the cost of a posterior.
 *
 * Model (statistics.md section 5): y ~ N(theta, s^2), theta ~ g = sum_k w_k f_k. The posterior is
 * the mixture sum_k w_k L_k f_k(theta | y) / sum_k w_k L_k, where L_k is the marginal likelihood of
 * component k (component-likelihood.ts) and each component posterior is conjugate:
 * - point at a: the point at a;
 * - normal N(m, t^2): N(mu, v), v = 1 / (1/s^2 + 1/t^2), mu = v (y/s^2 + m/t^2);
 * - uniform [l, u]: N(y, s^2) truncated to [l, u];
 * - half-normal / truncated normal N(m, t^2) on [l, u]: N(mu, v) truncated to [l, u];
 * - half-t: its half-normal scale mixture (halfTAsHalfNormals, as posterior.ts does).
 * Truncated-normal masses are taken in log space (logNormalIntervalProbability) so that tails far
 * beyond the data do not cancel. Conventions: lifts positive = good; the null is the point at 0.
 */
import { componentLogLikelihood, logNormalIntervalProbability } from "./component-likelihood.ts";
import { normalLogPdf } from "./distributions.ts";
import type { EffectPrior, PriorComponent } from "./effect-prior.ts";
import { requireFinite, requirePositive, StatsInputError } from "./errors.ts";
import { halfTAsHalfNormals } from "./posterior.ts";

/** Per-result columns (one entry per result). */
export interface PosteriorProbabilityColumns {
  /** E[theta | y]. */
  readonly mean: Float64Array;
  /** P(theta = 0 | y): the weight of the null component. */
  readonly probNull: Float64Array;
  /** P(theta < 0 | y). */
  readonly probNegative: Float64Array;
  /** P(theta > 0 | y). */
  readonly probPositive: Float64Array;
  /** P(theta > thresholds[j] | y) for each threshold asked for, in that order. */
  readonly probAbove: readonly Float64Array[];
}

export type Expanded = { readonly component: PriorComponent; readonly logWeight: number };

export function expandPrior(prior: EffectPrior): Expanded[] {
  const expanded: Expanded[] = [];
  for (const { component, weight } of prior.components) {
    if (!(weight >= 0) || !Number.isFinite(weight))
      throw new StatsInputError("prior weight", "a finite number >= 0", weight);
    if (weight === 0) continue;
    if (component.kind === "halfT") {
      for (const part of halfTAsHalfNormals(component))
        if (part.weight > 0)
          expanded.push({ component: part.component, logWeight: Math.log(weight * part.weight) });
    } else expanded.push({ component, logWeight: Math.log(weight) });
  }
  if (expanded.length === 0)
    throw new StatsInputError("prior", "a prior with positive total weight", "no weight");
  return expanded;
}

/** The conjugate posterior of one component: a point, or N(mu, sd^2) truncated to [lower, upper]. */
export interface ComponentPosterior {
  point: boolean;
  mu: number;
  sd: number;
  lower: number;
  upper: number;
}

function componentPosterior(component: PriorComponent, y: number, s: number, out: ComponentPosterior): void {
  out.lower = Number.NEGATIVE_INFINITY;
  out.upper = Number.POSITIVE_INFINITY;
  out.point = false;
  switch (component.kind) {
    case "point":
      out.point = true;
      out.mu = component.at;
      return;
    case "uniform":
      if (component.upper === component.lower) {
        out.point = true;
        out.mu = component.lower;
        return;
      }
      out.mu = y;
      out.sd = s;
      out.lower = component.lower;
      out.upper = component.upper;
      return;
    case "normal":
    case "halfNormal":
    case "truncatedNormal": {
      const mean = component.kind === "halfNormal" ? 0 : component.mean;
      const scale = component.scale;
      if (!(scale > 0)) {
        out.point = true;
        out.mu = mean;
        return;
      }
      const variance = 1 / (1 / (s * s) + 1 / (scale * scale));
      out.mu = variance * (y / (s * s) + mean / (scale * scale));
      out.sd = Math.sqrt(variance);
      if (component.kind === "halfNormal") {
        if (component.sign > 0) out.lower = 0;
        else out.upper = 0;
      } else if (component.kind === "truncatedNormal") {
        out.lower = component.lower;
        out.upper = component.upper;
      }
      return;
    }
    case "halfT":
      // Expanded into half-normals before this point.
      out.point = true;
      out.mu = Number.NaN;
      return;
  }
}

export function createComponentPosterior(): ComponentPosterior {
  return { point: true, mu: 0, sd: 0, lower: 0, upper: 0 };
}

/** The posterior figures of one component given (y, s): what a mixture's figures are sums of. */
export interface ComponentSummary {
  mean: number;
  probNull: number;
  probNegative: number;
  probPositive: number;
  /** P(theta > thresholds[j]) for each threshold. */
  readonly above: Float64Array;
}

export function createComponentSummary(thresholdCount: number): ComponentSummary {
  return { mean: 0, probNull: 0, probNegative: 0, probPositive: 0, above: new Float64Array(thresholdCount) };
}

/**
 * Fills `out` with the posterior figures of `component` for the result (y, s); `scratch` receives
 * its conjugate posterior. Shared by the per-result columns and the many-prior sums
 * (posterior-sums.ts), so both give the same figures.
 */
export function summarizeComponent(
  component: PriorComponent,
  y: number,
  s: number,
  thresholds: readonly number[],
  scratch: ComponentPosterior,
  out: ComponentSummary,
): void {
  componentPosterior(component, y, s, scratch);
  if (scratch.point) {
    const at = scratch.mu;
    out.mean = at;
    out.probNull = at === 0 ? 1 : 0;
    out.probNegative = at < 0 ? 1 : 0;
    out.probPositive = at > 0 ? 1 : 0;
    for (let j = 0; j < thresholds.length; j++) out.above[j] = at > (thresholds[j] as number) ? 1 : 0;
    return;
  }
  const alpha = (scratch.lower - scratch.mu) / scratch.sd;
  const beta = (scratch.upper - scratch.mu) / scratch.sd;
  const mass = logNormalIntervalProbability(alpha, beta);
  // Truncated-normal mean: mu + sd (phi(alpha) - phi(beta)) / Z, each ratio in log space.
  const atLower = Number.isFinite(alpha) ? Math.exp(normalLogPdf(alpha) - mass) : 0;
  const atUpper = Number.isFinite(beta) ? Math.exp(normalLogPdf(beta) - mass) : 0;
  out.mean = Math.min(scratch.upper, Math.max(scratch.lower, scratch.mu + scratch.sd * (atLower - atUpper)));
  const positive = upperTail(scratch, mass, 0);
  out.probNull = 0;
  out.probPositive = positive;
  out.probNegative = 1 - positive;
  for (let j = 0; j < thresholds.length; j++)
    out.above[j] = upperTail(scratch, mass, thresholds[j] as number);
}

/** P(theta > threshold) under a component posterior. */
function upperTail(posterior: ComponentPosterior, logMass: number, threshold: number): number {
  if (posterior.point) return posterior.mu > threshold ? 1 : 0;
  if (threshold >= posterior.upper) return 0;
  if (threshold <= posterior.lower) return 1;
  const from = (threshold - posterior.mu) / posterior.sd;
  const to = (posterior.upper - posterior.mu) / posterior.sd;
  return Math.min(1, Math.exp(logNormalIntervalProbability(from, to) - logMass));
}

/**
 * Posterior mean, P(null), P(theta < 0), P(theta > 0) and P(theta > threshold) for each threshold,
 * for every result (y[i], s[i]) under `prior`. Validates like posteriorColumns (StatsInputError
 * names the index); thresholds must be finite.
 */
export function posteriorProbabilityColumns(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  thresholds: readonly number[] = [],
): PosteriorProbabilityColumns {
  if (y.length !== s.length)
    throw new StatsInputError("s", `of the same length as y (${y.length})`, s.length);
  for (const [j, threshold] of thresholds.entries()) requireFinite(`thresholds[${j}]`, threshold);
  const count = y.length;
  for (let i = 0; i < count; i++) {
    requireFinite(`y[${i}]`, y[i] as number);
    requirePositive(`s[${i}]`, s[i] as number);
  }
  const components = expandPrior(prior);
  const k = components.length;
  const logJoint = new Float64Array(k);
  const posterior = createComponentPosterior();
  const columns: PosteriorProbabilityColumns = {
    mean: new Float64Array(count),
    probNull: new Float64Array(count),
    probNegative: new Float64Array(count),
    probPositive: new Float64Array(count),
    probAbove: thresholds.map(() => new Float64Array(count)),
  };
  const summary = createComponentSummary(thresholds.length);
  for (let i = 0; i < count; i++) {
    const yi = y[i] as number;
    const si = s[i] as number;
    let largest = Number.NEGATIVE_INFINITY;
    for (let c = 0; c < k; c++) {
      const { component, logWeight } = components[c] as Expanded;
      const joint = logWeight + componentLogLikelihood(component, yi, si);
      logJoint[c] = joint;
      if (joint > largest) largest = joint;
    }
    let total = 0;
    for (let c = 0; c < k; c++) {
      const share = Math.exp((logJoint[c] as number) - largest);
      logJoint[c] = share;
      total += share;
    }
    let mean = 0;
    let probNull = 0;
    let probNegative = 0;
    let probPositive = 0;
    const above = new Float64Array(thresholds.length);
    for (let c = 0; c < k; c++) {
      const weight = (logJoint[c] as number) / total;
      if (!(weight > 0)) continue;
      summarizeComponent((components[c] as Expanded).component, yi, si, thresholds, posterior, summary);
      mean += weight * summary.mean;
      probNull += weight * summary.probNull;
      probNegative += weight * summary.probNegative;
      probPositive += weight * summary.probPositive;
      for (let j = 0; j < thresholds.length; j++)
        above[j] = (above[j] as number) + weight * (summary.above[j] as number);
    }
    columns.mean[i] = mean;
    columns.probNull[i] = Math.min(1, probNull);
    columns.probNegative[i] = Math.min(1, probNegative);
    columns.probPositive[i] = Math.min(1, probPositive);
    for (let j = 0; j < thresholds.length; j++)
      (columns.probAbove[j] as Float64Array)[i] = Math.min(1, above[j] as number);
  }
  return columns;
}
