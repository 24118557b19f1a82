/**
 * The N x K matrix of marginal likelihoods L_ik = int N(y_i; theta, s_i^2) f_k(theta) dtheta
 * (statistics.md section 5), stored row-major in one Float64Array with each row divided by its
 * maximum, so that every row's largest entry is 1 and nothing underflows however extreme y_i/s_i
 * is; the row maxima are kept as logs (the log-likelihood adds them back). This is the scaling
 * used by mix-SQP (Kim, Carbonetto, Stephens & Anitescu 2020, JCGS 29:945, section 3.2).
 *
 * Point and normal components take a fast path in linear space (one exp and one sqrt a cell), and
 * so do point and uniform components together (the skewed family: each row evaluates the normal
 * cdf once per distinct bound, shared by the uniforms that end there). Either is redone in log
 * space for any row whose maximum would underflow. Other components are computed in log space
 * (componentLogLikelihood). Memory: 8 N K bytes plus 8 N for the row maxima.
 */
import { componentLogLikelihood } from "./component-likelihood.ts";
import { DistinctValues } from "./distinct-values.ts";
import { normalIntervalMass, normalPdf, normalTailsAtPoints } from "./distributions.ts";
import type { PriorComponent } from "./effect-prior.ts";

export interface LikelihoodMatrix {
  readonly rows: number;
  readonly columns: number;
  /** Row-major, values[i * columns + k] = L_ik / max_j L_ij. */
  readonly values: Float64Array;
  /** log max_j L_ij, including the -log(sqrt(2 pi)) of the normal density. */
  readonly logRowMax: Float64Array;
}

const logSqrtTwoPi = 0.9189385332046728;
// Below this a row maximum computed in linear space has lost precision to gradual underflow.
const smallestSafeMaximum = 1e-280;

export function likelihoodMatrix(
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  components: readonly PriorComponent[],
  options: {
    /** Over SharedArrayBuffers, so that another thread can read the matrix without a copy. */
    readonly shared?: boolean;
  } = {},
): LikelihoodMatrix {
  const rows = y.length;
  const columns = components.length;
  const allocate = (length: number): Float64Array =>
    options.shared
      ? new Float64Array(new SharedArrayBuffer(8 * Math.max(1, length)), 0, length)
      : new Float64Array(length);
  const values = allocate(rows * columns);
  const logRowMax = allocate(rows);
  const fast = components.every((component) => component.kind === "point" || component.kind === "normal");
  const uniformFast = components.every(
    (component) =>
      component.kind === "point" || (component.kind === "uniform" && component.upper > component.lower),
  );
  if (fast) fillGaussian(y, s, components, values, logRowMax);
  else if (uniformFast) fillPointsAndUniforms(y, s, components, values, logRowMax);
  else
    for (let i = 0; i < rows; i++)
      fillRowInLogSpace(y[i] as number, s[i] as number, components, values, logRowMax, i);
  return { rows, columns, values, logRowMax };
}

function fillGaussian(
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  components: readonly PriorComponent[],
  values: Float64Array,
  logRowMax: Float64Array,
): void {
  const columns = components.length;
  const means = new Float64Array(columns);
  const variances = new Float64Array(columns);
  components.forEach((component, k) => {
    if (component.kind === "point") means[k] = component.at;
    else if (component.kind === "normal") {
      means[k] = component.mean;
      variances[k] = component.scale * component.scale;
    }
  });
  for (let i = 0; i < y.length; i++) {
    const yi = y[i] as number;
    const si = s[i] as number;
    const seVariance = si * si;
    const offset = i * columns;
    let maximum = 0;
    for (let k = 0; k < columns; k++) {
      // One division an entry: the reciprocal variance serves the exponent and the scale.
      const precision = 1 / (seVariance + (variances[k] as number));
      const deviation = yi - (means[k] as number);
      const value = Math.exp(-0.5 * deviation * deviation * precision) * Math.sqrt(precision);
      values[offset + k] = value;
      if (value > maximum) maximum = value;
    }
    if (scaleRow(values, offset, columns, maximum)) logRowMax[i] = Math.log(maximum) - logSqrtTwoPi;
    else fillRowInLogSpace(yi, si, components, values, logRowMax, i);
  }
}

/**
 * Points and uniforms in linear space: a point at a gives phi((y - a)/s)/s, a uniform on [l, u]
 * gives (Phi((u - y)/s) - Phi((l - y)/s))/(u - l). Each distinct bound's tails are taken once a
 * row (normalTails) and an interval's mass is their difference on its side of 0 (normalIntervalMass).
 */
function fillPointsAndUniforms(
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  components: readonly PriorComponent[],
  values: Float64Array,
  logRowMax: Float64Array,
): void {
  const columns = components.length;
  const bounds = new DistinctValues();
  const isPoint = new Uint8Array(columns);
  const at = new Float64Array(columns);
  const lowerBound = new Int32Array(columns);
  const upperBound = new Int32Array(columns);
  const inverseWidth = new Float64Array(columns);
  components.forEach((component, k) => {
    if (component.kind === "point") {
      isPoint[k] = 1;
      at[k] = component.at;
    } else if (component.kind === "uniform") {
      lowerBound[k] = bounds.indexOf(component.lower);
      upperBound[k] = bounds.indexOf(component.upper);
      inverseWidth[k] = 1 / (component.upper - component.lower);
    }
  });
  const boundValues = bounds.values();
  const below = new Float64Array(bounds.count);
  const above = new Float64Array(bounds.count);
  const standardized = new Float64Array(bounds.count);
  const tails = new Float64Array(3);
  for (let i = 0; i < y.length; i++) {
    const yi = y[i] as number;
    const si = s[i] as number;
    normalTailsAtPoints(boundValues, yi, si, standardized, below, above, null, tails);
    const offset = i * columns;
    let maximum = 0;
    for (let k = 0; k < columns; k++) {
      let value: number;
      if (isPoint[k] === 1) {
        const z = (yi - (at[k] as number)) / si;
        value = normalPdf(z) / si;
      } else {
        const from = lowerBound[k] as number;
        const to = upperBound[k] as number;
        const mass = normalIntervalMass(
          standardized[from] as number,
          below[from] as number,
          above[from] as number,
          standardized[to] as number,
          below[to] as number,
          above[to] as number,
        );
        value = Math.max(0, mass) * (inverseWidth[k] as number);
      }
      values[offset + k] = value;
      if (value > maximum) maximum = value;
    }
    if (scaleRow(values, offset, columns, maximum)) logRowMax[i] = Math.log(maximum);
    else fillRowInLogSpace(yi, si, components, values, logRowMax, i);
  }
}

/**
 * Divides a row filled in linear space by its maximum; false (row untouched) when the maximum has
 * lost precision to underflow or overflowed, and the row must be redone in log space.
 */
function scaleRow(values: Float64Array, offset: number, columns: number, maximum: number): boolean {
  if (!(maximum > smallestSafeMaximum && maximum < Number.POSITIVE_INFINITY)) return false;
  const inverse = 1 / maximum;
  for (let k = 0; k < columns; k++) values[offset + k] = (values[offset + k] as number) * inverse;
  return true;
}

function fillRowInLogSpace(
  y: number,
  s: number,
  components: readonly PriorComponent[],
  values: Float64Array,
  logRowMax: Float64Array,
  row: number,
): void {
  const columns = components.length;
  const offset = row * columns;
  let maximum = Number.NEGATIVE_INFINITY;
  for (let k = 0; k < columns; k++) {
    const logValue = componentLogLikelihood(components[k] as PriorComponent, y, s);
    values[offset + k] = logValue;
    if (logValue > maximum) maximum = logValue;
  }
  for (let k = 0; k < columns; k++) values[offset + k] = Math.exp((values[offset + k] as number) - maximum);
  logRowMax[row] = maximum;
}
