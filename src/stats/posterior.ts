/**
 * The exact posterior of a true effect theta given one result (y, s), y ~ N(theta, s^2), under a
 * mixture prior (statistics.md section 5; Stephens 2017, Biostatistics 18:275, section 2.4):
 * the posterior is the mixture of the components' posteriors with weights proportional to
 * w_k L_k(y, s):
 * - point mass at a -> the same point mass;
 * - N(m, t^2) -> N((m s^2 + y t^2)/(s^2 + t^2), t^2 s^2/(s^2 + t^2)) (normal-normal conjugacy);
 * - Uniform[l, u] -> N(y, s^2) truncated to [l, u];
 * - half-normal and truncated normal -> the normal update, truncated to the same support.
 * Half-t components (assumed priors of shape `fat`) have no closed form: they are first replaced
 * by a scale mixture of half-normals (halfTAsHalfNormals), whose error is stated there.
 *
 * Reported per result: posterior mean (the shrunk lift), sd, the central credible interval at
 * `level` (quantiles (1-level)/2 and (1+level)/2 of the mixture, by safeguarded Halley steps; atoms
 * handled exactly), P(theta > 0), P(theta = 0), P(theta < 0), and the local false sign rate
 * lfsr = min(P(theta >= 0), P(theta <= 0)) (Stephens 2017, section 2.5).
 */
import { componentLogLikelihood, logNormalIntervalProbability } from "./component-likelihood.ts";
import {
  normalCdf,
  normalCdfAndDensity,
  normalIntervalMass,
  normalLogPdf,
  normalPdf,
  normalQuantile,
  normalSurvival,
  normalTails,
} from "./distributions.ts";
import type { EffectPrior, PriorComponent, WeightedComponent } from "./effect-prior.ts";
import { requireFinite, requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";

export interface Posterior {
  readonly mean: number;
  readonly sd: number;
  readonly lower: number;
  readonly upper: number;
  readonly level: number;
  readonly probPositive: number;
  readonly probNull: number;
  readonly probNegative: number;
  readonly lfsr: number;
}

export const defaultCredibleLevel = 0.9;

/** Column form of many posteriors (one entry per result), for large batches. */
export interface PosteriorColumns {
  readonly level: number;
  readonly mean: Float64Array;
  readonly sd: Float64Array;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  readonly probPositive: Float64Array;
  readonly probNull: Float64Array;
  readonly probNegative: Float64Array;
  readonly lfsr: Float64Array;
}

const kindPoint = 0;
const kindNormal = 1;
const kindTruncated = 2;

// Posterior components below this share are dropped: they cannot move any reported figure.
const negligibleShare = 1e-15;

/** A prior prepared for many evaluations: component parameters in typed arrays. */
interface PreparedPrior {
  readonly count: number;
  readonly kind: Uint8Array;
  /** point: at; normal / truncated: mean */
  readonly location: Float64Array;
  readonly scale: Float64Array;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  readonly logWeight: Float64Array;
  /** log P_prior(lower < theta < upper) for truncated components. */
  readonly logPriorMass: Float64Array;
  /** uniform components: width (their kind is recorded as truncated with scale NaN). */
  readonly uniformWidth: Float64Array;
}

/** Per-result scratch space: the posterior mixture of the current result. */
interface Workspace {
  count: number;
  readonly kind: Uint8Array;
  readonly weight: Float64Array;
  readonly location: Float64Array;
  readonly scale: Float64Array;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  readonly logMass: Float64Array;
  readonly logLikelihood: Float64Array;
  /** Scratch for normalCdfAndDensity: [cdf, density]. */
  readonly pair: Float64Array;
  /** The mixture density and its slope at the last point of the quantile search. */
  readonly derivatives: Float64Array;
  /**
   * Uniform components in linear space: the posterior mass Z of [l, u] under N(y, s^2) (0 marks a
   * component left to log space), and at each bound the standardized value, both tails and the
   * density, so that a cdf or density of such a component costs arithmetic (uniformTails).
   */
  readonly linearMass: Float64Array;
  readonly lowerZ: Float64Array;
  readonly lowerBelow: Float64Array;
  readonly lowerAbove: Float64Array;
  readonly lowerDensity: Float64Array;
  readonly upperZ: Float64Array;
  readonly upperBelow: Float64Array;
  readonly upperAbove: Float64Array;
  readonly upperDensity: Float64Array;
  /** Scratch of normalTails: [below, above, density]. */
  readonly tails: Float64Array;
}

export function posteriorOf(
  prior: EffectPrior,
  y: number,
  s: number,
  level: number = defaultCredibleLevel,
): Posterior {
  validateResult(y, s);
  requireOpenUnit("level", level);
  const prepared = preparePrior(prior);
  const workspace = createWorkspace(prepared.count);
  fillPosterior(prepared, y, s, workspace);
  return summarize(workspace, level, normalQuantile((1 + level) / 2));
}

/** P(theta > threshold | y, s), threshold >= 0 (a practical-significance threshold). */
export function posteriorProbabilityAbove(
  prior: EffectPrior,
  y: number,
  s: number,
  threshold: number,
): number {
  validateResult(y, s);
  requireThreshold(threshold);
  const out = new Float64Array(1);
  writeProbabilityAboveRows(prior, [y], [s], threshold, out, 0, 1);
  return out[0] as number;
}

function requireThreshold(threshold: number): void {
  requireFinite("threshold", threshold);
  if (threshold < 0) throw new StatsInputError("threshold", "at least 0", threshold);
}

/**
 * posteriorProbabilityAbove for many results under one prior: column i is P(theta > threshold |
 * y[i], s[i]), the same arithmetic row by row. Validates like posteriorColumns.
 */
export function posteriorProbabilityAboveColumn(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  threshold: number,
): Float64Array {
  validateProbabilityAboveInputs(y, s, threshold);
  const out = new Float64Array(y.length);
  writeProbabilityAboveRows(prior, y, s, threshold, out, 0, y.length);
  return out;
}

/** What posteriorProbabilityAboveColumn checks: posteriorColumns' inputs and a threshold >= 0. */
export function validateProbabilityAboveInputs(
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  threshold: number,
): void {
  validatePosteriorInputs(y, s, defaultCredibleLevel);
  requireThreshold(threshold);
}

/**
 * Writes P(theta > threshold | y, s) of rows [from, to) into `out` at the same rows (inputs
 * validated); rows are independent, so ranges can be written on any thread with the same result.
 */
export function writeProbabilityAboveRows(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  threshold: number,
  out: Float64Array,
  from: number,
  to: number,
): void {
  const prepared = preparePrior(prior);
  const workspace = createWorkspace(prepared.count);
  for (let i = from; i < to; i++) {
    fillPosterior(prepared, y[i] as number, s[i] as number, workspace);
    out[i] = clampProbability(mixtureUpperTail(workspace, threshold));
  }
}

/** The exact posterior as a mixture of point, normal and truncated-normal components. */
export function posteriorMixture(prior: EffectPrior, y: number, s: number): readonly WeightedComponent[] {
  validateResult(y, s);
  const prepared = preparePrior(prior);
  const workspace = createWorkspace(prepared.count);
  fillPosterior(prepared, y, s, workspace);
  const components: WeightedComponent[] = [];
  for (let c = 0; c < workspace.count; c++) {
    const weight = workspace.weight[c] as number;
    const location = workspace.location[c] as number;
    const scale = workspace.scale[c] as number;
    let component: PriorComponent;
    if (workspace.kind[c] === kindPoint) component = { kind: "point", at: location };
    else if (workspace.kind[c] === kindNormal) component = { kind: "normal", mean: location, scale };
    else
      component = {
        kind: "truncatedNormal",
        mean: location,
        scale,
        lower: workspace.lower[c] as number,
        upper: workspace.upper[c] as number,
      };
    components.push({ component, weight });
  }
  return components;
}

/** Posteriors of many results under one prior, in columns (no per-result objects). */
export function posteriorColumns(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  level: number = defaultCredibleLevel,
): PosteriorColumns {
  validatePosteriorInputs(y, s, level);
  const columns = emptyPosteriorColumns(y.length, level);
  writePosteriorRows(prior, y, s, columns, 0, y.length);
  return columns;
}

/**
 * Checks what posteriorColumns checks (level in (0, 1), equal lengths, finite y, positive finite s),
 * throwing StatsInputError naming the first offending entry.
 */
export function validatePosteriorInputs(y: ArrayLike<number>, s: ArrayLike<number>, level: number): void {
  requireOpenUnit("level", level);
  if (y.length !== s.length)
    throw new StatsInputError("s", `of the same length as y (${y.length})`, s.length);
  for (let i = 0; i < y.length; i++) {
    const yi = y[i] as number;
    const si = s[i] as number;
    // The parameter name is only built for the offending entry (a million template strings cost more
    // than the posteriors' arithmetic).
    if (!Number.isFinite(yi)) requireFinite(`y[${i}]`, yi);
    if (!(si > 0 && si < Number.POSITIVE_INFINITY)) requirePositive(`s[${i}]`, si);
  }
}

/** The columns of PosteriorColumns, in the order of the buffers given to emptyPosteriorColumns. */
export const posteriorColumnNames = [
  "mean",
  "sd",
  "lower",
  "upper",
  "probPositive",
  "probNull",
  "probNegative",
  "lfsr",
] as const;

export const posteriorColumnCount = posteriorColumnNames.length;

/** Columns for `count` posteriors, over the given buffers (shared between threads) or new ones. */
export function emptyPosteriorColumns(
  count: number,
  level: number,
  buffers?: readonly ArrayBufferLike[],
): PosteriorColumns {
  const column = (name: (typeof posteriorColumnNames)[number]): Float64Array => {
    const buffer = buffers?.[posteriorColumnNames.indexOf(name)];
    return buffer ? new Float64Array(buffer, 0, count) : new Float64Array(count);
  };
  return {
    level,
    mean: column("mean"),
    sd: column("sd"),
    lower: column("lower"),
    upper: column("upper"),
    probPositive: column("probPositive"),
    probNull: column("probNull"),
    probNegative: column("probNegative"),
    lfsr: column("lfsr"),
  };
}

/**
 * Writes the posteriors of rows [from, to) into `columns` at the same rows, at `columns.level`.
 * The inputs must have passed validatePosteriorInputs; each row depends on its own (y, s) only, so
 * ranges can be written in any order or on any thread with the same result.
 */
export function writePosteriorRows(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  columns: PosteriorColumns,
  from: number,
  to: number,
): void {
  const prepared = preparePrior(prior);
  const workspace = createWorkspace(prepared.count);
  const level = columns.level;
  const upperZ = normalQuantile((1 + level) / 2);
  for (let i = from; i < to; i++) {
    fillPosterior(prepared, y[i] as number, s[i] as number, workspace);
    summarizeInto(workspace, level, upperZ, columns, i);
  }
}

function validateResult(y: number, s: number): void {
  requireFinite("y", y);
  requirePositive("s", s);
}

// ---- preparing the prior ------------------------------------------------------------------

function preparePrior(prior: EffectPrior): PreparedPrior {
  const expanded: { component: PriorComponent; weight: number }[] = [];
  for (const { component, weight } of prior.components) {
    if (!(weight >= 0) || !Number.isFinite(weight))
      throw new StatsInputError("prior weight", "a finite number >= 0", weight);
    if (weight === 0) continue;
    if (component.kind === "halfT") {
      for (const part of halfTAsHalfNormals(component))
        expanded.push({ component: part.component, weight: weight * part.weight });
    } else expanded.push({ component, weight });
  }
  if (expanded.length === 0)
    throw new StatsInputError("prior", "a prior with positive total weight", "no weight");
  const count = expanded.length;
  const prepared: PreparedPrior = {
    count,
    kind: new Uint8Array(count),
    location: new Float64Array(count),
    scale: new Float64Array(count),
    lower: new Float64Array(count),
    upper: new Float64Array(count),
    logWeight: new Float64Array(count),
    logPriorMass: new Float64Array(count),
    uniformWidth: new Float64Array(count),
  };
  expanded.forEach(({ component, weight }, c) => {
    prepared.logWeight[c] = Math.log(weight);
    prepared.lower[c] = Number.NEGATIVE_INFINITY;
    prepared.upper[c] = Number.POSITIVE_INFINITY;
    switch (component.kind) {
      case "point":
        prepared.kind[c] = kindPoint;
        prepared.location[c] = component.at;
        break;
      case "normal":
        prepared.kind[c] = component.scale > 0 ? kindNormal : kindPoint;
        prepared.location[c] = component.mean;
        prepared.scale[c] = component.scale;
        break;
      case "uniform":
        if (component.upper === component.lower) {
          prepared.kind[c] = kindPoint;
          prepared.location[c] = component.lower;
        } else {
          prepared.kind[c] = kindTruncated;
          prepared.scale[c] = Number.NaN;
          prepared.lower[c] = component.lower;
          prepared.upper[c] = component.upper;
          prepared.uniformWidth[c] = component.upper - component.lower;
        }
        break;
      case "halfNormal":
        prepared.kind[c] = kindTruncated;
        prepared.scale[c] = component.scale;
        if (component.sign > 0) prepared.lower[c] = 0;
        else prepared.upper[c] = 0;
        prepared.logPriorMass[c] = Math.log(0.5);
        break;
      case "truncatedNormal":
        prepared.kind[c] = kindTruncated;
        prepared.location[c] = component.mean;
        prepared.scale[c] = component.scale;
        prepared.lower[c] = component.lower;
        prepared.upper[c] = component.upper;
        prepared.logPriorMass[c] = logNormalIntervalProbability(
          (component.lower - component.mean) / component.scale,
          (component.upper - component.mean) / component.scale,
        );
        break;
      case "halfT":
        break;
    }
  });
  return prepared;
}

/** Points of the trapezoid rule in u = log(lambda) for the half-t scale mixture. */
const halfTLogPrecisionLow = -24;
const halfTLogPrecisionHigh = 4;
const halfTLogPrecisionStep = 0.25;

/**
 * A half-t with df nu and scale sigma as a mixture of half-normals: |t| = |N(0, sigma^2/lambda)|
 * with lambda ~ Gamma(nu/2, rate nu/2). The integral over u = log lambda is taken by the
 * trapezoid rule on [-24, 4] with step 0.25 (113 half-normals); the integrand decays like
 * exp(nu u/2) to the left and doubly exponentially to the right, so for nu >= 2 the truncation
 * error is below 1e-10 and the rule's discretization error is far smaller (trapezoid rules
 * converge geometrically for such analytic integrands; Trefethen & Weideman 2014, SIAM Rev. 56:385).
 */
export function halfTAsHalfNormals(
  component: Extract<PriorComponent, { kind: "halfT" }>,
): WeightedComponent[] {
  const halfDf = component.df / 2;
  const parts: { scale: number; logWeight: number }[] = [];
  for (let u = halfTLogPrecisionLow; u <= halfTLogPrecisionHigh + 1e-9; u += halfTLogPrecisionStep) {
    parts.push({ scale: component.scale * Math.exp(-u / 2), logWeight: halfDf * u - halfDf * Math.exp(u) });
  }
  const largest = Math.max(...parts.map((part) => part.logWeight));
  const total = parts.reduce((sum, part) => sum + Math.exp(part.logWeight - largest), 0);
  return parts.map((part) => ({
    component: { kind: "halfNormal", sign: component.sign, scale: part.scale },
    weight: Math.exp(part.logWeight - largest) / total,
  }));
}

function createWorkspace(capacity: number): Workspace {
  return {
    count: 0,
    kind: new Uint8Array(capacity),
    weight: new Float64Array(capacity),
    location: new Float64Array(capacity),
    scale: new Float64Array(capacity),
    lower: new Float64Array(capacity),
    upper: new Float64Array(capacity),
    logMass: new Float64Array(capacity),
    logLikelihood: new Float64Array(capacity),
    pair: new Float64Array(2),
    derivatives: new Float64Array(2),
    linearMass: new Float64Array(capacity),
    lowerZ: new Float64Array(capacity),
    lowerBelow: new Float64Array(capacity),
    lowerAbove: new Float64Array(capacity),
    lowerDensity: new Float64Array(capacity),
    upperZ: new Float64Array(capacity),
    upperBelow: new Float64Array(capacity),
    upperAbove: new Float64Array(capacity),
    upperDensity: new Float64Array(capacity),
    tails: new Float64Array(3),
  };
}

// ---- the posterior mixture of one result ----------------------------------------------------

function fillPosterior(prior: PreparedPrior, y: number, s: number, workspace: Workspace): void {
  const seVariance = s * s;
  let largest = Number.NEGATIVE_INFINITY;
  for (let c = 0; c < prior.count; c++) {
    const kind = prior.kind[c] as number;
    const location = prior.location[c] as number;
    const scale = prior.scale[c] as number;
    let logLikelihood: number;
    if (kind === kindPoint) {
      const z = (y - location) / s;
      logLikelihood = normalLogPdf(z) - Math.log(s);
    } else if (kind === kindNormal) {
      const variance = seVariance + scale * scale;
      const z = (y - location) / Math.sqrt(variance);
      logLikelihood = normalLogPdf(z) - 0.5 * Math.log(variance);
    } else if (Number.isNaN(scale)) {
      const lower = prior.lower[c] as number;
      const upper = prior.upper[c] as number;
      const mass = linearUniformMass(workspace, c, (lower - y) / s, (upper - y) / s);
      logLikelihood =
        mass > 0
          ? Math.log(mass) - Math.log(prior.uniformWidth[c] as number)
          : componentLogLikelihood({ kind: "uniform", lower, upper }, y, s);
    } else {
      const variance = seVariance + scale * scale;
      const posteriorMean = (location * seVariance + y * scale * scale) / variance;
      const posteriorScale = (scale * s) / Math.sqrt(variance);
      const z = (y - location) / Math.sqrt(variance);
      logLikelihood =
        normalLogPdf(z) -
        0.5 * Math.log(variance) +
        logNormalIntervalProbability(
          ((prior.lower[c] as number) - posteriorMean) / posteriorScale,
          ((prior.upper[c] as number) - posteriorMean) / posteriorScale,
        ) -
        (prior.logPriorMass[c] as number);
    }
    const logJoint = (prior.logWeight[c] as number) + logLikelihood;
    workspace.logLikelihood[c] = logJoint;
    if (logJoint > largest) largest = logJoint;
  }
  let total = 0;
  // The scratch row now holds exp(log joint - largest), so that each exp is taken once.
  for (let c = 0; c < prior.count; c++) {
    const scaled = Math.exp((workspace.logLikelihood[c] as number) - largest);
    workspace.logLikelihood[c] = scaled;
    total += scaled;
  }
  let count = 0;
  for (let c = 0; c < prior.count; c++) {
    const share = (workspace.logLikelihood[c] as number) / total;
    if (share < negligibleShare) continue;
    const kind = prior.kind[c] as number;
    const location = prior.location[c] as number;
    const scale = prior.scale[c] as number;
    workspace.weight[count] = share;
    workspace.kind[count] = kind;
    workspace.lower[count] = prior.lower[c] as number;
    workspace.upper[count] = prior.upper[c] as number;
    if (kind === kindPoint) {
      workspace.location[count] = location;
      workspace.scale[count] = 0;
    } else if (Number.isNaN(scale)) {
      // Uniform prior: the posterior is the likelihood N(y, s^2) restricted to [l, u].
      workspace.location[count] = y;
      workspace.scale[count] = s;
    } else {
      const variance = seVariance + scale * scale;
      workspace.location[count] = (location * seVariance + y * scale * scale) / variance;
      workspace.scale[count] = (scale * s) / Math.sqrt(variance);
    }
    const linearMass =
      kind === kindTruncated && Number.isNaN(scale) ? (workspace.linearMass[c] as number) : 0;
    workspace.linearMass[count] = linearMass;
    if (linearMass > 0) {
      // Slot count <= c: copy the uniform's linear-space values down.
      workspace.lowerZ[count] = workspace.lowerZ[c] as number;
      workspace.lowerBelow[count] = workspace.lowerBelow[c] as number;
      workspace.lowerAbove[count] = workspace.lowerAbove[c] as number;
      workspace.lowerDensity[count] = workspace.lowerDensity[c] as number;
      workspace.upperZ[count] = workspace.upperZ[c] as number;
      workspace.upperBelow[count] = workspace.upperBelow[c] as number;
      workspace.upperAbove[count] = workspace.upperAbove[c] as number;
      workspace.upperDensity[count] = workspace.upperDensity[c] as number;
      workspace.logMass[count] = Math.log(linearMass);
    } else if (kind === kindTruncated) {
      const m = workspace.location[count] as number;
      const sc = workspace.scale[count] as number;
      workspace.logMass[count] = logNormalIntervalProbability(
        ((workspace.lower[count] as number) - m) / sc,
        ((workspace.upper[count] as number) - m) / sc,
      );
    }
    count++;
  }
  // Renormalize after dropping negligible components.
  let kept = 0;
  for (let c = 0; c < count; c++) kept += workspace.weight[c] as number;
  for (let c = 0; c < count; c++) workspace.weight[c] = (workspace.weight[c] as number) / kept;
  workspace.count = count;
}

// ---- uniform components in linear space ---------------------------------------------------

// A uniform's posterior mass below this, or a bound this many standard errors beyond the data on
// the far side (where the moments need the one-sided continued fraction), stays in log space.
const smallestLinearMass = 1e-280;
const linearTailLimit = 8;

/**
 * For prior component c, a uniform with standardized bounds a = (l - y)/s and b = (u - y)/s: stores
 * both tails and the density at each bound in slot c and returns the posterior mass
 * Phi(b) - Phi(a) (normalIntervalMass), or 0 when it must stay in log space.
 */
function linearUniformMass(workspace: Workspace, c: number, a: number, b: number): number {
  workspace.linearMass[c] = 0;
  if (a >= linearTailLimit || b <= -linearTailLimit) return 0;
  normalTails(a, workspace.tails);
  workspace.lowerZ[c] = a;
  workspace.lowerBelow[c] = workspace.tails[0] as number;
  workspace.lowerAbove[c] = workspace.tails[1] as number;
  workspace.lowerDensity[c] = workspace.tails[2] as number;
  normalTails(b, workspace.tails);
  workspace.upperZ[c] = b;
  workspace.upperBelow[c] = workspace.tails[0] as number;
  workspace.upperAbove[c] = workspace.tails[1] as number;
  workspace.upperDensity[c] = workspace.tails[2] as number;
  const mass = normalIntervalMass(
    a,
    workspace.lowerBelow[c] as number,
    workspace.lowerAbove[c] as number,
    b,
    workspace.upperBelow[c] as number,
    workspace.upperAbove[c] as number,
  );
  if (!(mass > smallestLinearMass)) return 0;
  workspace.linearMass[c] = mass;
  return mass;
}

/** P(component c < t) for a linear-space uniform, with the tails at z_t in workspace.tails. */
function linearUniformLowerTail(workspace: Workspace, c: number, zt: number): number {
  const tails = workspace.tails;
  const mass = normalIntervalMass(
    workspace.lowerZ[c] as number,
    workspace.lowerBelow[c] as number,
    workspace.lowerAbove[c] as number,
    zt,
    tails[0] as number,
    tails[1] as number,
  );
  return Math.min(1, Math.max(0, mass / (workspace.linearMass[c] as number)));
}

/** P(component c > t) for a linear-space uniform, with the tails at z_t in workspace.tails. */
function linearUniformUpperTail(workspace: Workspace, c: number, zt: number): number {
  const tails = workspace.tails;
  const mass = normalIntervalMass(
    zt,
    tails[0] as number,
    tails[1] as number,
    workspace.upperZ[c] as number,
    workspace.upperBelow[c] as number,
    workspace.upperAbove[c] as number,
  );
  return Math.min(1, Math.max(0, mass / (workspace.linearMass[c] as number)));
}

// ---- moments, tails and quantiles of the mixture ---------------------------------------------

/** Mean and variance of N(m, sc^2) truncated to [l, u] (stable deep in the tails). */
function truncatedMoments(m: number, sc: number, l: number, u: number, logMass: number): [number, number] {
  const alpha = (l - m) / sc;
  const beta = (u - m) / sc;
  const ratioLower = Number.isFinite(alpha) ? Math.exp(normalLogPdf(alpha) - logMass) : 0;
  const ratioUpper = Number.isFinite(beta) ? Math.exp(normalLogPdf(beta) - logMass) : 0;
  // Far in a tail with the other bound irrelevant, 1 + alpha r - r^2 cancels catastrophically;
  // the one-sided moments then come from the Mills-ratio continued fraction instead.
  if (alpha >= oneSidedTailStart && ratioUpper * Math.max(1, Math.abs(beta)) < 1e-17 * ratioLower) {
    const [delta, spread] = oneSidedTail(alpha);
    return [Math.min(u, l + sc * delta), sc * sc * spread];
  }
  if (beta <= -oneSidedTailStart && ratioLower * Math.max(1, Math.abs(alpha)) < 1e-17 * ratioUpper) {
    const [delta, spread] = oneSidedTail(-beta);
    return [Math.max(l, u - sc * delta), sc * sc * spread];
  }
  return momentsFromBoundRatios(m, sc, l, u, ratioLower, ratioUpper);
}

/**
 * Mean and variance of N(m, sc^2) truncated to [l, u] from the ratios phi(alpha)/Z and phi(beta)/Z
 * at the standardized bounds (Z the mass): mean m + sc (r_l - r_u), variance
 * sc^2 (1 + alpha r_l - beta r_u - (r_l - r_u)^2), width^2/12 when rounding leaves it non-positive.
 */
function momentsFromBoundRatios(
  m: number,
  sc: number,
  l: number,
  u: number,
  ratioLower: number,
  ratioUpper: number,
): [number, number] {
  const alpha = (l - m) / sc;
  const beta = (u - m) / sc;
  const shift = ratioLower - ratioUpper;
  const mean = Math.min(u, Math.max(l, m + sc * shift));
  const spread =
    1 +
    (Number.isFinite(alpha) ? alpha * ratioLower : 0) -
    (Number.isFinite(beta) ? beta * ratioUpper : 0) -
    shift * shift;
  let variance = sc * sc * spread;
  if (!(variance > 0)) {
    const width = u - l;
    variance = Number.isFinite(width) ? (width * width) / 12 : 0;
  }
  return [mean, variance];
}

const oneSidedTailStart = 8;

/**
 * For Z ~ N(0, 1) conditioned on Z > a (a >= 8): [E[Z] - a, Var(Z)]. With the inverse Mills ratio
 * r = phi(a)/Q(a) = a + delta, delta = 1/(a + e), e = 2/(a + 3/(a + 4/(a + ...))) (Abramowitz &
 * Stegun 26.2.14), E[Z] = a + delta and Var(Z) = 1 + a r - r^2 = delta (e - delta), free of cancellation.
 */
function oneSidedTail(a: number): [number, number] {
  let fraction = a;
  for (let term = 60; term >= 3; term--) fraction = a + term / fraction;
  const e = 2 / fraction;
  const delta = 1 / (a + e);
  return [delta, delta * (e - delta)];
}

/** P(component > t). */
function componentUpperTail(workspace: Workspace, c: number, t: number): number {
  const kind = workspace.kind[c] as number;
  const m = workspace.location[c] as number;
  if (kind === kindPoint) return m > t ? 1 : 0;
  const sc = workspace.scale[c] as number;
  if (kind === kindNormal) return normalSurvival((t - m) / sc);
  const l = workspace.lower[c] as number;
  const u = workspace.upper[c] as number;
  if (t <= l) return 1;
  if (t >= u) return 0;
  if ((workspace.linearMass[c] as number) > 0) {
    const zt = (t - m) / sc;
    normalTails(zt, workspace.tails);
    return linearUniformUpperTail(workspace, c, zt);
  }
  return Math.exp(
    logNormalIntervalProbability((t - m) / sc, (u - m) / sc) - (workspace.logMass[c] as number),
  );
}

/** P(component < t). */
function componentLowerTail(workspace: Workspace, c: number, t: number): number {
  const kind = workspace.kind[c] as number;
  const m = workspace.location[c] as number;
  if (kind === kindPoint) return m < t ? 1 : 0;
  const sc = workspace.scale[c] as number;
  if (kind === kindNormal) return normalCdf((t - m) / sc);
  const l = workspace.lower[c] as number;
  const u = workspace.upper[c] as number;
  if (t <= l) return 0;
  if (t >= u) return 1;
  if ((workspace.linearMass[c] as number) > 0) {
    const zt = (t - m) / sc;
    normalTails(zt, workspace.tails);
    return linearUniformLowerTail(workspace, c, zt);
  }
  return Math.exp(
    logNormalIntervalProbability((l - m) / sc, (t - m) / sc) - (workspace.logMass[c] as number),
  );
}

function componentDensity(workspace: Workspace, c: number, t: number): number {
  const kind = workspace.kind[c] as number;
  if (kind === kindPoint) return 0;
  const m = workspace.location[c] as number;
  const sc = workspace.scale[c] as number;
  const z = (t - m) / sc;
  if (kind === kindNormal) return Math.exp(normalLogPdf(z)) / sc;
  if (t < (workspace.lower[c] as number) || t > (workspace.upper[c] as number)) return 0;
  if ((workspace.linearMass[c] as number) > 0)
    return normalPdf(z) / (sc * (workspace.linearMass[c] as number));
  return Math.exp(normalLogPdf(z) - (workspace.logMass[c] as number)) / sc;
}

function mixtureUpperTail(workspace: Workspace, t: number): number {
  let total = 0;
  for (let c = 0; c < workspace.count; c++)
    total += (workspace.weight[c] as number) * componentUpperTail(workspace, c, t);
  return total;
}

function mixtureLowerTail(workspace: Workspace, t: number): number {
  let total = 0;
  for (let c = 0; c < workspace.count; c++)
    total += (workspace.weight[c] as number) * componentLowerTail(workspace, c, t);
  return total;
}

/**
 * The mixture cdf at t, with the density and its slope at t left in workspace.derivatives (a
 * typed array: a double kept in a module variable is boxed anew on every store), one pass for a
 * Newton step.
 */
function mixtureLowerTailAndDensity(workspace: Workspace, t: number): number {
  let total = 0;
  let density = 0;
  let slope = 0;
  let sharedZ = Number.NaN;
  for (let c = 0; c < workspace.count; c++) {
    const weight = workspace.weight[c] as number;
    const kind = workspace.kind[c] as number;
    if (kind === kindPoint) {
      // An atom adds its weight once t is past it, and nothing to the density.
      if ((workspace.location[c] as number) < t) total += weight;
    } else if (kind === kindNormal) {
      const m = workspace.location[c] as number;
      const sc = workspace.scale[c] as number;
      const z = (t - m) / sc;
      normalCdfAndDensity(z, workspace.pair);
      total += weight * (workspace.pair[0] as number);
      const part = (weight * (workspace.pair[1] as number)) / sc;
      density += part;
      slope -= (part * z) / sc;
    } else if ((workspace.linearMass[c] as number) > 0) {
      // Every uniform's posterior is N(y, s^2) restricted: z_t and its tails are shared.
      const m = workspace.location[c] as number;
      const sc = workspace.scale[c] as number;
      const l = workspace.lower[c] as number;
      const u = workspace.upper[c] as number;
      if (t <= l) continue;
      if (t >= u) {
        total += weight;
        continue;
      }
      const z = (t - m) / sc;
      if (z !== sharedZ) {
        normalTails(z, workspace.tails);
        sharedZ = z;
      }
      total += weight * linearUniformLowerTail(workspace, c, z);
      const part = (weight * (workspace.tails[2] as number)) / (sc * (workspace.linearMass[c] as number));
      density += part;
      slope -= (part * z) / sc;
    } else {
      total += weight * componentLowerTail(workspace, c, t);
      const part = weight * componentDensity(workspace, c, t);
      density += part;
      if (part > 0)
        slope -= (part * (t - (workspace.location[c] as number))) / (workspace.scale[c] as number) ** 2;
    }
  }
  workspace.derivatives[0] = density;
  workspace.derivatives[1] = slope;
  return total;
}

function summarize(workspace: Workspace, level: number, upperZ: number): Posterior {
  const one = (): Float64Array => new Float64Array(1);
  const columns: PosteriorColumns = {
    level,
    mean: one(),
    sd: one(),
    lower: one(),
    upper: one(),
    probPositive: one(),
    probNull: one(),
    probNegative: one(),
    lfsr: one(),
  };
  summarizeInto(workspace, level, upperZ, columns, 0);
  return {
    mean: columns.mean[0] as number,
    sd: columns.sd[0] as number,
    lower: columns.lower[0] as number,
    upper: columns.upper[0] as number,
    level,
    probPositive: columns.probPositive[0] as number,
    probNull: columns.probNull[0] as number,
    probNegative: columns.probNegative[0] as number,
    lfsr: columns.lfsr[0] as number,
  };
}

/** The summaries of the current posterior mixture, written at `index` of the columns. */
function summarizeInto(
  workspace: Workspace,
  level: number,
  upperZ: number,
  out: PosteriorColumns,
  index: number,
): void {
  let mean = 0;
  let secondMoment = 0;
  let probPositive = 0;
  let probNull = 0;
  let probNegative = 0;
  let pointMassOnly = true;
  let continuousWeight = 0;
  let continuousMean = 0;
  let continuousSecond = 0;
  for (let c = 0; c < workspace.count; c++) {
    const weight = workspace.weight[c] as number;
    const kind = workspace.kind[c] as number;
    let componentMean = workspace.location[c] as number;
    let componentVariance = 0;
    if (kind === kindNormal) {
      componentVariance = (workspace.scale[c] as number) ** 2;
      pointMassOnly = false;
    } else if (kind === kindTruncated && (workspace.linearMass[c] as number) > 0) {
      // The bound densities over the mass, in linear space (no far tail here).
      const mass = workspace.linearMass[c] as number;
      [componentMean, componentVariance] = momentsFromBoundRatios(
        componentMean,
        workspace.scale[c] as number,
        workspace.lower[c] as number,
        workspace.upper[c] as number,
        (workspace.lowerDensity[c] as number) / mass,
        (workspace.upperDensity[c] as number) / mass,
      );
      pointMassOnly = false;
    } else if (kind === kindTruncated) {
      [componentMean, componentVariance] = truncatedMoments(
        componentMean,
        workspace.scale[c] as number,
        workspace.lower[c] as number,
        workspace.upper[c] as number,
        workspace.logMass[c] as number,
      );
      pointMassOnly = false;
    }
    mean += weight * componentMean;
    secondMoment += weight * (componentVariance + componentMean * componentMean);
    if (kind !== kindPoint) {
      continuousWeight += weight;
      continuousMean += weight * componentMean;
      continuousSecond += weight * (componentVariance + componentMean * componentMean);
    }
    if (kind === kindPoint && componentMean === 0) probNull += weight;
    else if (kind === kindNormal) {
      // One cdf call for both sides: the smaller tail is computed directly (full relative
      // accuracy) and the larger side is its complement.
      const z = componentMean / (workspace.scale[c] as number);
      const smaller = normalCdf(-Math.abs(z));
      probPositive += weight * (z > 0 ? 1 - smaller : smaller);
      probNegative += weight * (z > 0 ? smaller : 1 - smaller);
    } else {
      probPositive += weight * componentUpperTail(workspace, c, 0);
      probNegative += weight * componentLowerTail(workspace, c, 0);
    }
  }
  const variance = Math.max(0, secondMoment - mean * mean);
  const sd = Math.sqrt(variance);
  const tailShare = (1 - level) / 2;
  // P(theta < 0) as summed above is the mixture cdf just below an atom at 0, which the quantile
  // search needs; it is passed on rather than summed again.
  const belowZero = probNegative;
  let lowerStart = mean - upperZ * sd;
  let upperStart = mean + upperZ * sd;
  if (probNull > 0 && continuousWeight > 0) {
    const centre = continuousMean / continuousWeight;
    const spread = Math.sqrt(Math.max(0, continuousSecond / continuousWeight - centre * centre));
    const upperP = 1 - tailShare;
    const lowerShare = (tailShare > belowZero ? tailShare - probNull : tailShare) / continuousWeight;
    const upperShare = (upperP > belowZero ? upperP - probNull : upperP) / continuousWeight;
    lowerStart = centre + spread * normalQuantile(Math.min(1 - 1e-12, Math.max(1e-12, lowerShare)));
    upperStart = centre + spread * normalQuantile(Math.min(1 - 1e-12, Math.max(1e-12, upperShare)));
  }
  out.lower[index] = mixtureQuantile(workspace, tailShare, lowerStart, sd, pointMassOnly, belowZero);
  out.upper[index] = mixtureQuantile(workspace, 1 - tailShare, upperStart, sd, pointMassOnly, belowZero);
  probPositive = clampProbability(probPositive);
  probNegative = clampProbability(probNegative);
  probNull = clampProbability(probNull);
  out.mean[index] = mean;
  out.sd[index] = sd;
  out.probPositive[index] = probPositive;
  out.probNull[index] = probNull;
  out.probNegative[index] = probNegative;
  out.lfsr[index] = clampProbability(Math.min(probPositive + probNull, probNegative + probNull));
}

function clampProbability(value: number): number {
  return Math.min(1, Math.max(0, value));
}

/** Whether a truncated component's bound lies strictly between a and b (in either order). */
function boundBetween(workspace: Workspace, a: number, b: number): boolean {
  const from = Math.min(a, b);
  const to = Math.max(a, b);
  for (let c = 0; c < workspace.count; c++) {
    if (workspace.kind[c] !== kindTruncated) continue;
    const l = workspace.lower[c] as number;
    const u = workspace.upper[c] as number;
    if ((l > from && l < to) || (u > from && u < to)) return true;
  }
  return false;
}

/**
 * inf { t : F(t) >= p } for the mixture cdf F: atoms first (p inside a jump returns the atom),
 * then safeguarded Halley (or Newton) steps on the continuous part, started at the normal
 * approximation.
 */
function mixtureQuantile(
  workspace: Workspace,
  p: number,
  start: number,
  spread: number,
  pointMassOnly: boolean,
  belowZero: number,
): number {
  const count = workspace.count;
  if (pointMassOnly) {
    const order = Array.from({ length: count }, (_, c) => c).sort(
      (a, b) => (workspace.location[a] as number) - (workspace.location[b] as number),
    );
    let cumulative = 0;
    for (const c of order) {
      cumulative += workspace.weight[c] as number;
      if (cumulative >= p * (1 - 1e-15)) return workspace.location[c] as number;
    }
    return workspace.location[order[order.length - 1] as number] as number;
  }
  let low = Number.POSITIVE_INFINITY;
  let high = Number.NEGATIVE_INFINITY;
  for (let c = 0; c < count; c++) {
    const kind = workspace.kind[c] as number;
    const m = workspace.location[c] as number;
    if (kind === kindPoint) {
      low = Math.min(low, m);
      high = Math.max(high, m);
      continue;
    }
    const sc = workspace.scale[c] as number;
    const l = workspace.lower[c] as number;
    const u = workspace.upper[c] as number;
    low = Math.min(low, Number.isFinite(l) ? l : Math.min(m, u) - 12 * sc);
    high = Math.max(high, Number.isFinite(u) ? u : Math.max(m, l) + 12 * sc);
  }
  // Atoms: p inside a jump returns the atom; otherwise the atom bounds the bracket on its side,
  // so that Newton never steps across a jump.
  for (let c = 0; c < count; c++) {
    if (workspace.kind[c] !== kindPoint) continue;
    const m = workspace.location[c] as number;
    const below = m === 0 ? belowZero : mixtureLowerTail(workspace, m);
    if (below < p && p <= below + (workspace.weight[c] as number)) return m;
    if (p <= below) high = Math.min(high, m);
    else low = Math.max(low, m);
  }
  let t = start > low && start < high ? start : 0.5 * (low + high);
  // Newton converges quadratically from the normal approximation: stop at a cdf error of 1e-13
  // (a quantile error of about 1e-13 / density) or a step below 1e-13 of the spread.
  const resolution = 1e-13 * Math.max(spread, 1e-300);
  for (let iteration = 0; iteration < 200; iteration++) {
    const below = mixtureLowerTailAndDensity(workspace, t);
    const excess = below - p;
    if (Math.abs(excess) <= 1e-13) return t;
    if (excess < 0) low = t;
    else high = t;
    const density = workspace.derivatives[0] as number;
    // Halley's step (Newton's corrected by the density's slope) converges cubically, which saves
    // about one cdf evaluation per quantile; it falls back to Newton's when the correction is large.
    const newtonStep = excess / density;
    const correction = 1 - (0.5 * newtonStep * (workspace.derivatives[1] as number)) / density;
    const halley = correction > 0.5 && correction < 2;
    let next = density > 0 ? t - (halley ? newtonStep / correction : newtonStep) : Number.NaN;
    if (!(next > low && next < high)) next = 0.5 * (low + high);
    // Close to p the step's own error is far below the stopping rule: within 1e-8 Newton's error
    // is of order (1e-8)^2, within 1e-6 Halley's of order (1e-6)^3, so the step is taken and the
    // search stops; unless a truncated component's bound lies between t and the step, where the
    // density jumps and those error orders do not hold.
    else if (Math.abs(excess) <= (halley ? 1e-6 : 1e-8) && !boundBetween(workspace, t, next)) return next;
    if (Math.abs(next - t) <= resolution || high - low <= resolution) return next;
    t = next;
  }
  return t;
}
