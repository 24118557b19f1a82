/**
 * What a prior of true effects says about a program (statistics.md section 5): the null share
 * P(theta = 0), the win rate P(theta > delta) and loss rate P(theta < -delta) for a practical
 * threshold delta >= 0, the mean size of real wins E[theta | theta > delta] and of real losses
 * E[-theta | theta < -delta] (both positive), the prior mean and sd, and for charting the density
 * of the continuous part on a grid plus the atoms (point masses, the null among them).
 * Every figure is exact per component (normal, uniform and truncated-normal tail moments in closed
 * form); half-t components go through their half-normal scale mixture (halfTAsHalfNormals).
 */
import { logNormalIntervalProbability } from "./component-likelihood.ts";
import { normalCdf, normalLogPdf, normalSurvival } from "./distributions.ts";
import type { EffectPrior, PriorComponent } from "./effect-prior.ts";
import { requireFinite, StatsInputError } from "./errors.ts";
import { halfTAsHalfNormals } from "./posterior.ts";

export interface PriorSummary {
  readonly threshold: number;
  readonly nullShare: number;
  readonly winRate: number;
  readonly lossRate: number;
  /** E[theta | theta > threshold]; null when the win rate is 0. */
  readonly meanWinSize: number | null;
  /** E[-theta | theta < -threshold] (a positive size); null when the loss rate is 0. */
  readonly meanLossSize: number | null;
  readonly mean: number;
  readonly sd: number;
  /** Density of the continuous part (it integrates to 1 - total atom mass). */
  readonly density: { readonly theta: readonly number[]; readonly density: readonly number[] };
  readonly atoms: readonly { readonly theta: number; readonly mass: number }[];
}

export interface PriorSummaryOptions {
  /** Practical threshold delta >= 0 (default 0). */
  readonly threshold?: number;
  /** Points of the density grid (default 201). */
  readonly densityPoints?: number;
}

/** Tail figures of one component: P(> t), P(< -t), E[theta 1{theta > t}], E[theta 1{theta < -t}]. */
interface Tails {
  above: number;
  below: number;
  partialMeanAbove: number;
  partialMeanBelow: number;
  mean: number;
  secondMoment: number;
}

export function summarizePrior(prior: EffectPrior, options: PriorSummaryOptions = {}): PriorSummary {
  const threshold = options.threshold ?? 0;
  requireFinite("threshold", threshold);
  if (threshold < 0) throw new StatsInputError("threshold", "at least 0", threshold);
  const points = options.densityPoints ?? 201;
  if (!Number.isInteger(points) || points < 2)
    throw new StatsInputError("densityPoints", "an integer >= 2", points);
  const components = expandHalfT(prior);
  let nullShare = 0;
  let winRate = 0;
  let lossRate = 0;
  let partialAbove = 0;
  let partialBelow = 0;
  let mean = 0;
  let secondMoment = 0;
  const atoms = new Map<number, number>();
  for (const { component, weight } of components) {
    if (component.kind === "point") {
      atoms.set(component.at, (atoms.get(component.at) ?? 0) + weight);
      if (component.at === 0) nullShare += weight;
    }
    const tails = componentTails(component, threshold);
    winRate += weight * tails.above;
    lossRate += weight * tails.below;
    partialAbove += weight * tails.partialMeanAbove;
    partialBelow += weight * tails.partialMeanBelow;
    mean += weight * tails.mean;
    secondMoment += weight * tails.secondMoment;
  }
  return {
    threshold,
    nullShare,
    winRate,
    lossRate,
    meanWinSize: winRate > 0 ? partialAbove / winRate : null,
    meanLossSize: lossRate > 0 ? -partialBelow / lossRate : null,
    mean,
    sd: Math.sqrt(Math.max(0, secondMoment - mean * mean)),
    density: densityGrid(components, points),
    atoms: [...atoms.entries()].sort((a, b) => a[0] - b[0]).map(([theta, mass]) => ({ theta, mass })),
  };
}

function expandHalfT(prior: EffectPrior): { component: PriorComponent; weight: number }[] {
  const expanded: { component: PriorComponent; weight: number }[] = [];
  for (const { component, weight } of prior.components) {
    if (component.kind === "halfT")
      for (const part of halfTAsHalfNormals(component))
        expanded.push({ component: part.component, weight: weight * part.weight });
    else expanded.push({ component, weight });
  }
  return expanded;
}

/** Truncated normal N(m, sc^2) on [l, u] as (m, sc, l, u); uniform, half-normal map here too. */
function asTruncated(component: PriorComponent): [number, number, number, number] | null {
  if (component.kind === "normal")
    return [component.mean, component.scale, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY];
  if (component.kind === "halfNormal")
    return component.sign > 0
      ? [0, component.scale, 0, Number.POSITIVE_INFINITY]
      : [0, component.scale, Number.NEGATIVE_INFINITY, 0];
  if (component.kind === "truncatedNormal")
    return [component.mean, component.scale, component.lower, component.upper];
  return null;
}

/** P(a < theta < b) and E[theta 1{a < theta < b}] for N(m, sc^2) restricted to [l, u]. */
function truncatedPiece(m: number, sc: number, l: number, u: number, a: number, b: number): [number, number] {
  const low = Math.max(l, a);
  const high = Math.min(u, b);
  if (!(high > low)) return [0, 0];
  const logMass = logNormalIntervalProbability((l - m) / sc, (u - m) / sc);
  const alpha = (low - m) / sc;
  const beta = (high - m) / sc;
  const probability = Math.exp(logNormalIntervalProbability(alpha, beta) - logMass);
  const densityDifference =
    (Number.isFinite(alpha) ? Math.exp(normalLogPdf(alpha) - logMass) : 0) -
    (Number.isFinite(beta) ? Math.exp(normalLogPdf(beta) - logMass) : 0);
  return [probability, m * probability + sc * densityDifference];
}

function componentTails(component: PriorComponent, threshold: number): Tails {
  const infinity = Number.POSITIVE_INFINITY;
  if (component.kind === "point") {
    const at = component.at;
    return {
      above: at > threshold ? 1 : 0,
      below: at < -threshold ? 1 : 0,
      partialMeanAbove: at > threshold ? at : 0,
      partialMeanBelow: at < -threshold ? at : 0,
      mean: at,
      secondMoment: at * at,
    };
  }
  if (component.kind === "uniform") {
    const { lower, upper } = component;
    const width = upper - lower;
    const piece = (a: number, b: number): [number, number] => {
      const low = Math.max(lower, a);
      const high = Math.min(upper, b);
      if (!(high > low)) return [0, 0];
      return [(high - low) / width, (high * high - low * low) / (2 * width)];
    };
    const [above, partialMeanAbove] = piece(threshold, infinity);
    const [below, partialMeanBelow] = piece(-infinity, -threshold);
    const mean = (lower + upper) / 2;
    return {
      above,
      below,
      partialMeanAbove,
      partialMeanBelow,
      mean,
      secondMoment: mean * mean + (width * width) / 12,
    };
  }
  const truncated = asTruncated(component);
  if (truncated === null)
    throw new StatsInputError(
      "prior component",
      "point, normal, uniform, half-normal or truncated normal",
      component.kind,
    );
  const [m, sc, l, u] = truncated;
  if (component.kind === "normal") {
    const zAbove = (threshold - m) / sc;
    const zBelow = (-threshold - m) / sc;
    const above = normalSurvival(zAbove);
    const below = normalCdf(zBelow);
    return {
      above,
      below,
      partialMeanAbove: m * above + sc * Math.exp(normalLogPdf(zAbove)),
      partialMeanBelow: m * below - sc * Math.exp(normalLogPdf(zBelow)),
      mean: m,
      secondMoment: m * m + sc * sc,
    };
  }
  const [above, partialMeanAbove] = truncatedPiece(m, sc, l, u, threshold, infinity);
  const [below, partialMeanBelow] = truncatedPiece(m, sc, l, u, -infinity, -threshold);
  const [, mean] = truncatedPiece(m, sc, l, u, -infinity, infinity);
  // E[theta^2] of a truncated normal: m^2 + sc^2 + sc (2m + ...) terms; via E[(theta-m)^2] = sc^2 (1 + (a phi(a) - b phi(b))/Z).
  const logMass = logNormalIntervalProbability((l - m) / sc, (u - m) / sc);
  const alpha = (l - m) / sc;
  const beta = (u - m) / sc;
  const edgeTerm =
    (Number.isFinite(alpha) ? alpha * Math.exp(normalLogPdf(alpha) - logMass) : 0) -
    (Number.isFinite(beta) ? beta * Math.exp(normalLogPdf(beta) - logMass) : 0);
  const centeredSecond = sc * sc * (1 + edgeTerm);
  const secondMoment = Math.max(0, centeredSecond + 2 * m * mean - m * m);
  return { above, below, partialMeanAbove, partialMeanBelow, mean, secondMoment };
}

function densityGrid(
  components: readonly { component: PriorComponent; weight: number }[],
  points: number,
): PriorSummary["density"] {
  let extent = 0;
  for (const { component, weight } of components) {
    if (weight <= 0 || component.kind === "point") continue;
    if (component.kind === "uniform")
      extent = Math.max(extent, Math.abs(component.lower), Math.abs(component.upper));
    else {
      const truncated = asTruncated(component);
      if (truncated === null) continue;
      const [m, sc, l, u] = truncated;
      const reach = Math.abs(m) + 4 * sc;
      extent = Math.max(extent, Math.min(reach, Math.max(Math.abs(l), Math.abs(u))));
    }
  }
  if (extent === 0) return { theta: [], density: [] };
  const theta: number[] = [];
  const density: number[] = [];
  for (let j = 0; j < points; j++) {
    const t = -extent + (2 * extent * j) / (points - 1);
    let value = 0;
    for (const { component, weight } of components) {
      if (weight <= 0) continue;
      if (component.kind === "uniform") {
        if (t >= component.lower && t <= component.upper)
          value += weight / (component.upper - component.lower);
        continue;
      }
      const truncated = asTruncated(component);
      if (truncated === null) continue;
      const [m, sc, l, u] = truncated;
      if (t < l || t > u) continue;
      const logMass = logNormalIntervalProbability((l - m) / sc, (u - m) / sc);
      value += (weight * Math.exp(normalLogPdf((t - m) / sc) - logMass)) / sc;
    }
    theta.push(t);
    density.push(value);
  }
  return { theta, density };
}
