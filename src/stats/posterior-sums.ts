/**
 * Sums over many results of their posterior figures (mean, P(null), P(theta < 0), P(theta > 0),
 * P(theta > t)) under each of many priors that share their components: the bootstrap refits of one
 * family, which differ only in weights (bootstrap-prior.ts). Per result, each component's
 * likelihood and posterior figures are computed once (summarizeComponent, the kernel of
 * posterior-probabilities.ts) and each prior's figures are then weighted averages of them, so a
 * prior costs multiply-adds instead of a pass of likelihoods in log space.
 *
 * The posterior weight of component k under prior b is w_bk L_k / sum_j w_bj L_j, with the
 * likelihoods scaled by their largest over the shared components; if that scaling underflows for
 * one prior's components (a result far from all of them), the row is redone in log space for it.
 * The figures equal the sums of posteriorProbabilityColumns' columns up to rounding.
 *
 * Uniform components (the skewed family) are summarized in linear space from the normal cdf and
 * density at each distinct bound and threshold, taken once a result: the posterior of a uniform on
 * [l, u] is N(y, s^2) truncated there, whose mass, mean and tails are differences of those values
 * (normalTails and normalIntervalMass, which keep them from cancelling). A mass too
 * small for linear space sends that component to the log-space kernel.
 */
import { componentLogLikelihood } from "./component-likelihood.ts";
import { DistinctValues } from "./distinct-values.ts";
import { normalIntervalMass, normalLogPdf, normalTailsAtPoints } from "./distributions.ts";
import type { EffectPrior, PriorComponent } from "./effect-prior.ts";
import { requireFinite, requirePositive, StatsInputError } from "./errors.ts";
import {
  type ComponentSummary,
  createComponentPosterior,
  createComponentSummary,
  expandPrior,
  summarizeComponent,
} from "./posterior-probabilities.ts";

export interface PosteriorSums {
  readonly mean: number;
  readonly probNull: number;
  readonly probNegative: number;
  readonly probPositive: number;
  /** Sum of P(theta > thresholds[j] | y) for each threshold. */
  readonly probAbove: readonly number[];
}

// Below this the scaled row total has lost too much of its precision: redo the row in log space.
const smallestReliableTotal = 1e-280;

/**
 * Checks what posteriorSumsUnderPriors checks (equal lengths, finite y and thresholds, positive
 * finite s), throwing StatsInputError naming the first offending entry.
 */
export function validateSumsInputs(
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  thresholds: readonly number[],
): void {
  if (y.length !== s.length)
    throw new StatsInputError("s", `of the same length as y (${y.length})`, s.length);
  for (const [j, threshold] of thresholds.entries()) requireFinite(`thresholds[${j}]`, threshold);
  for (let i = 0; i < y.length; i++) {
    if (!Number.isFinite(y[i] as number)) requireFinite(`y[${i}]`, y[i] as number);
    const si = s[i] as number;
    if (!(si > 0 && si < Number.POSITIVE_INFINITY)) requirePositive(`s[${i}]`, si);
  }
}

/** For each prior, the sums over results i of its posterior figures for (y[i], s[i]). */
export function posteriorSumsUnderPriors(
  priors: readonly EffectPrior[],
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  thresholds: readonly number[] = [],
): PosteriorSums[] {
  validateSumsInputs(y, s, thresholds);
  const count = y.length;
  if (priors.length === 0) return [];

  // The shared components (by value) and each prior's weights over them.
  const shared: PriorComponent[] = [];
  const indexOf = new Map<string, number>();
  const expandedPriors = priors.map((prior) => expandPrior(prior));
  for (const expanded of expandedPriors)
    for (const { component } of expanded) {
      const key = JSON.stringify(component);
      if (!indexOf.has(key)) {
        indexOf.set(key, shared.length);
        shared.push(component);
      }
    }
  const k = shared.length;
  const weights = expandedPriors.map((expanded) => {
    const row = new Float64Array(k);
    for (const { component, logWeight } of expanded) {
      const index = indexOf.get(JSON.stringify(component)) as number;
      row[index] = (row[index] as number) + Math.exp(logWeight);
    }
    return row;
  });

  // Each prior's own components (refits are sparse): its loops run over these only.
  const supports = weights.map((row) => {
    const support: number[] = [];
    for (let c = 0; c < k; c++) if ((row[c] as number) > 0) support.push(c);
    return Int32Array.from(support);
  });
  const thresholdCount = thresholds.length;
  const uniforms = uniformBounds(shared, thresholds);
  // Per result: each shared component's log-likelihood, scaled likelihood and figures.
  const stride = firstAbove + thresholdCount;
  const rows: RowState = {
    weights,
    supports,
    logLikelihood: new Float64Array(k),
    likelihood: new Float64Array(k),
    stride,
    figures: new Float64Array(k * stride),
    row: new Float64Array(stride + 1),
    sums: priors.map(() => new Float64Array(stride)),
  };
  const { logLikelihood, likelihood, figures } = rows;
  const scratch = createComponentPosterior();
  const summary = createComponentSummary(thresholdCount);
  // A point mass's figures do not depend on the result: they are written once, and per result only
  // its log-likelihood is taken (componentLogLikelihood's formula, inline: the grid family has
  // hundreds of them).
  const pointAt = new Float64Array(k);
  const isPoint = new Uint8Array(k);
  for (let c = 0; c < k; c++) {
    const component = shared[c] as PriorComponent;
    if (component.kind !== "point") continue;
    isPoint[c] = 1;
    pointAt[c] = component.at;
    summarizeComponent(component, 0, 1, thresholds, scratch, summary);
    writeFigures(figures, c * stride, summary, thresholdCount);
  }

  for (let i = 0; i < count; i++) {
    const yi = y[i] as number;
    const si = s[i] as number;
    const pointSd = Math.sqrt(si * si);
    const logPointSd = Math.log(pointSd);
    let largest = Number.NEGATIVE_INFINITY;
    if (uniforms.count > 0) uniforms.evaluate(yi, si);
    for (let c = 0; c < k; c++) {
      if (isPoint[c] === 1) {
        const value = normalLogPdf((yi - (pointAt[c] as number)) / pointSd) - logPointSd;
        logLikelihood[c] = value;
        if (value > largest) largest = value;
        continue;
      }
      if (uniforms.isUniform[c] === 1 && uniforms.summarize(c, yi, si, summary)) {
        logLikelihood[c] = uniforms.logLikelihood;
      } else {
        logLikelihood[c] = componentLogLikelihood(shared[c] as PriorComponent, yi, si);
        summarizeComponent(shared[c] as PriorComponent, yi, si, thresholds, scratch, summary);
      }
      const value = logLikelihood[c] as number;
      if (value > largest) largest = value;
      writeFigures(figures, c * stride, summary, thresholdCount);
    }
    for (let c = 0; c < k; c++) likelihood[c] = Math.exp((logLikelihood[c] as number) - largest);
    addRowUnderPriors(rows);
  }
  return rows.sums.map((sum) => ({
    mean: sum[figureMean] as number,
    probNull: sum[figureNull] as number,
    probNegative: sum[figureNegative] as number,
    probPositive: sum[figurePositive] as number,
    probAbove: Array.from(sum.subarray(firstAbove)),
  }));
}

/**
 * Per result, the shared components' log-likelihoods, scaled likelihoods and figures (packed
 * `stride` apart: mean, P(null), P(theta < 0), P(theta > 0), then P(theta > t_j)), and each
 * prior's weights over them and its running sums.
 */
interface RowState {
  readonly weights: readonly Float64Array[];
  readonly supports: readonly Int32Array[];
  readonly logLikelihood: Float64Array;
  readonly likelihood: Float64Array;
  readonly stride: number;
  readonly figures: Float64Array;
  /** Scratch: the row's total weight, then its weighted figures. */
  readonly row: Float64Array;
  /** Per prior, `stride` running sums in the order of the figures. */
  readonly sums: readonly Float64Array[];
}

/** One component's figures into its slot of `figures`. */
function writeFigures(
  figures: Float64Array,
  offset: number,
  summary: ComponentSummary,
  thresholdCount: number,
): void {
  figures[offset + figureMean] = summary.mean;
  figures[offset + figureNull] = summary.probNull;
  figures[offset + figureNegative] = summary.probNegative;
  figures[offset + figurePositive] = summary.probPositive;
  for (let j = 0; j < thresholdCount; j++) figures[offset + firstAbove + j] = summary.above[j] as number;
}

const figureMean = 0;
const figureNull = 1;
const figureNegative = 2;
const figurePositive = 3;
const firstAbove = 4;

/**
 * The current result's weighted figures under prior b into rows.row ([total, figures...]), the
 * weights w_k L_k scaled by the shared largest likelihood, or in log space from `best` (the
 * prior's own largest log joint) when that scaling underflows for its components.
 */
function weighRow(rows: RowState, b: number, logSpaceBest: number | null): void {
  const { logLikelihood, likelihood, stride, figures, row } = rows;
  const w = rows.weights[b] as Float64Array;
  const support = rows.supports[b] as Int32Array;
  const thresholdCount = stride - firstAbove;
  // Locals for the fixed figures and the first two thresholds (kept in registers: a review asks
  // for one or two), the row for any further threshold.
  let total = 0;
  let mean = 0;
  let probNull = 0;
  let probNegative = 0;
  let probPositive = 0;
  let above0 = 0;
  let above1 = 0;
  for (let f = 3 + firstAbove; f <= stride; f++) row[f] = 0;
  for (let index = 0; index < support.length; index++) {
    const c = support[index] as number;
    const part =
      logSpaceBest === null
        ? (w[c] as number) * (likelihood[c] as number)
        : Math.exp(Math.log(w[c] as number) + (logLikelihood[c] as number) - logSpaceBest);
    if (!(part > 0)) continue;
    const offset = c * stride;
    total += part;
    mean += part * (figures[offset + figureMean] as number);
    probNull += part * (figures[offset + figureNull] as number);
    probNegative += part * (figures[offset + figureNegative] as number);
    probPositive += part * (figures[offset + figurePositive] as number);
    if (thresholdCount > 0) {
      above0 += part * (figures[offset + firstAbove] as number);
      if (thresholdCount > 1) {
        above1 += part * (figures[offset + firstAbove + 1] as number);
        for (let f = firstAbove + 2; f < stride; f++)
          row[f + 1] = (row[f + 1] as number) + part * (figures[offset + f] as number);
      }
    }
  }
  row[0] = total;
  row[1 + figureMean] = mean;
  row[1 + figureNull] = probNull;
  row[1 + figureNegative] = probNegative;
  row[1 + figurePositive] = probPositive;
  if (thresholdCount > 0) row[1 + firstAbove] = above0;
  if (thresholdCount > 1) row[2 + firstAbove] = above1;
}

/** Adds the current result's figures under each prior to its sums (its own function: it runs hot). */
function addRowUnderPriors(rows: RowState): void {
  const { stride, row } = rows;
  for (let b = 0; b < rows.weights.length; b++) {
    weighRow(rows, b, null);
    if (!((row[0] as number) > smallestReliableTotal)) {
      const w = rows.weights[b] as Float64Array;
      const support = rows.supports[b] as Int32Array;
      let best = Number.NEGATIVE_INFINITY;
      for (let index = 0; index < support.length; index++) {
        const c = support[index] as number;
        best = Math.max(best, Math.log(w[c] as number) + (rows.logLikelihood[c] as number));
      }
      weighRow(rows, b, best);
    }
    const inverse = 1 / (row[0] as number);
    const sum = rows.sums[b] as Float64Array;
    sum[figureMean] = (sum[figureMean] as number) + (row[1 + figureMean] as number) * inverse;
    // Probabilities are capped at 1 row by row (rounding can carry a sum of shares past it).
    for (let f = figureNull; f < stride; f++)
      sum[f] = (sum[f] as number) + Math.min(1, (row[f + 1] as number) * inverse);
  }
}

// Below this an interval's mass computed in linear space has lost precision to underflow.
const smallestLinearMass = 1e-280;

/**
 * The uniform components' bounds and the thresholds (and 0) as one list of points; per result,
 * the standardized point, both tails and the density at each; then each uniform's figures.
 */
function uniformBounds(components: readonly PriorComponent[], thresholds: readonly number[]) {
  const points = new DistinctValues();
  const k = components.length;
  const isUniform = new Uint8Array(k);
  const from = new Int32Array(k);
  const to = new Int32Array(k);
  const lower = new Float64Array(k);
  const upper = new Float64Array(k);
  const logWidth = new Float64Array(k);
  let count = 0;
  components.forEach((component, c) => {
    if (component.kind === "uniform" && component.upper > component.lower) {
      isUniform[c] = 1;
      from[c] = points.indexOf(component.lower);
      to[c] = points.indexOf(component.upper);
      lower[c] = component.lower;
      upper[c] = component.upper;
      logWidth[c] = Math.log(component.upper - component.lower);
      count++;
    }
  });
  const zero = points.indexOf(0);
  const thresholdPoint = Int32Array.from(thresholds, (threshold) => points.indexOf(threshold));
  const values = points.values();
  const z = new Float64Array(points.count);
  const below = new Float64Array(points.count);
  const above = new Float64Array(points.count);
  const density = new Float64Array(points.count);
  const tails = new Float64Array(3);

  const state = {
    count,
    isUniform,
    /** log-likelihood of the component last summarized. */
    logLikelihood: 0,
    evaluate(y: number, s: number): void {
      normalTailsAtPoints(values, y, s, z, below, above, density, tails);
    },
    /** Fills `out` for uniform component c; false when its mass is too small for linear space. */
    summarize(c: number, y: number, s: number, out: ComponentSummary): boolean {
      const a = from[c] as number;
      const b = to[c] as number;
      const total = intervalMass(z, below, above, a, b);
      if (!(total > smallestLinearMass)) return false;
      const l = lower[c] as number;
      const u = upper[c] as number;
      state.logLikelihood = Math.log(total) - (logWidth[c] as number);
      out.mean = Math.min(
        u,
        Math.max(l, y + (s * ((density[a] as number) - (density[b] as number))) / total),
      );
      out.probNull = 0;
      // P(theta > t) = mass of [t, u] / mass of [l, u] for t inside.
      const positive = 0 <= l ? 1 : 0 >= u ? 0 : Math.min(1, intervalMass(z, below, above, zero, b) / total);
      out.probPositive = positive;
      out.probNegative = 1 - positive;
      for (let j = 0; j < thresholdPoint.length; j++) {
        const at = thresholds[j] as number;
        out.above[j] =
          at <= l
            ? 1
            : at >= u
              ? 0
              : Math.min(1, intervalMass(z, below, above, thresholdPoint[j] as number, b) / total);
      }
      return true;
    },
  };
  return state;
}

/** normalIntervalMass between points a and b (z[a] <= z[b]) of the per-result arrays. */
function intervalMass(
  z: Float64Array,
  below: Float64Array,
  above: Float64Array,
  a: number,
  b: number,
): number {
  return normalIntervalMass(
    z[a] as number,
    below[a] as number,
    above[a] as number,
    z[b] as number,
    below[b] as number,
    above[b] as number,
  );
}
