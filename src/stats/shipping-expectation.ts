/**
 * What a shipping rule does to a program with a given prior of true effects: the probability
 * that a test ships, the expected true effect it ships, and how much of that is real.
 *
 * Model (statistics.md sections 0 and 7): theta ~ prior, y | theta ~ N(theta, s^2); a test
 * ships when y > threshold (threshold on the lift scale, i.e. z* s). Every expectation is an
 * exact integral over the prior, never Monte Carlo:
 * - point mass: direct;
 * - normal (and half-normal, which is a normal restricted to a side, and a truncated normal):
 *   P(theta in (lo, hi], y > t) is a bivariate normal orthant difference (Genz 2004), and
 *   E[theta 1{...}] follows by integrating u phi(u) Phi(c + d u) by parts, which closes on a
 *   normal tail after completing the square;
 * - uniform: antiderivatives of Phi(x) (x Phi(x) + phi(x)) and of x Phi(x)
 *   (((x^2 - 1) Phi(x) + x phi(x)) / 2);
 * - half-t: adaptive Gauss-Legendre quadrature (src/stats/prior-quadrature.ts).
 * Ranges of theta are half-open (lo, hi]: a null test (theta = 0) counts as a false win for
 * effectAbove = 0, matching "false win: theta <= delta" in statistics.md section 6.
 * Kernels: non-finite or non-positive standard errors give NaN; nothing throws.
 */
import { normalCdf, normalPdf } from "./distributions.ts";
import type { EffectPrior, PriorComponent } from "./effect-prior.ts";
import {
  bivariateNormalUpperProbability,
  integrateAdaptive,
  integrateMassAndMoment,
  studentTDensity,
  studentTDensityFunction,
} from "./prior-quadrature.ts";

/** P(theta in (lower, upper], y > threshold) and E[theta 1{theta in (lower, upper]} 1{y > threshold}]. */
export interface ShippingPartial {
  readonly probability: number;
  readonly effectMoment: number;
}

/** Probability that a test ships: P(y > threshold), y = theta + N(0, s^2), theta ~ prior. */
export function probabilityOfShipping(prior: EffectPrior, standardError: number, threshold: number): number {
  return shippingPartial(prior, standardError, threshold).probability;
}

/** Expected true effect shipped per test: E[theta 1{y > threshold}]. */
export function expectedShippedEffect(prior: EffectPrior, standardError: number, threshold: number): number {
  return shippingPartial(prior, standardError, threshold).effectMoment;
}

/** Probability of a real win: P(theta > effectAbove and y > threshold). */
export function probabilityOfShippingAbove(
  prior: EffectPrior,
  standardError: number,
  threshold: number,
  effectAbove: number,
): number {
  return shippingPartial(prior, standardError, threshold, effectAbove, Number.POSITIVE_INFINITY).probability;
}

/** Probability of a false win: P(theta <= effectAbove and y > threshold). */
export function probabilityOfFalseShipping(
  prior: EffectPrior,
  standardError: number,
  threshold: number,
  effectAbove: number,
): number {
  return shippingPartial(prior, standardError, threshold, Number.NEGATIVE_INFINITY, effectAbove).probability;
}

/** Expected shipped loss E[theta 1{theta < 0} 1{y > threshold}] (a negative number or 0). */
export function expectedShippedLoss(prior: EffectPrior, standardError: number, threshold: number): number {
  // The interval (-inf, 0] also holds theta = 0, whose contribution to the moment is 0.
  return shippingPartial(prior, standardError, threshold, Number.NEGATIVE_INFINITY, 0).effectMoment;
}

/**
 * P(theta in (lower, upper], y > threshold) and E[theta 1{theta in (lower, upper]} 1{y > threshold}]
 * over the whole prior (weights as given).
 */
export function shippingPartial(
  prior: EffectPrior,
  standardError: number,
  threshold: number,
  lower = Number.NEGATIVE_INFINITY,
  upper = Number.POSITIVE_INFINITY,
): ShippingPartial {
  if (!(standardError > 0) || !Number.isFinite(standardError) || Number.isNaN(threshold)) {
    return { probability: Number.NaN, effectMoment: Number.NaN };
  }
  let probability = 0;
  let effectMoment = 0;
  for (const { component, weight } of prior.components) {
    if (weight === 0) continue;
    const part = componentPartial(component, standardError, threshold, lower, upper);
    probability += weight * part.probability;
    effectMoment += weight * part.effectMoment;
  }
  return { probability, effectMoment };
}

const zeroPartial: ShippingPartial = { probability: 0, effectMoment: 0 };

/** The same partial expectation for one component of the prior. */
export function componentPartial(
  component: PriorComponent,
  standardError: number,
  threshold: number,
  lower: number,
  upper: number,
): ShippingPartial {
  if (!(lower < upper)) return zeroPartial;
  switch (component.kind) {
    case "point": {
      if (!(component.at > lower && component.at <= upper)) return zeroPartial;
      const probability = normalCdf((component.at - threshold) / standardError);
      return { probability, effectMoment: component.at * probability };
    }
    case "normal":
      if (component.scale === 0) {
        return componentPartial(
          { kind: "point", at: component.mean },
          standardError,
          threshold,
          lower,
          upper,
        );
      }
      return normalPartial(component.mean, component.scale, standardError, threshold, lower, upper);
    case "halfNormal": {
      // theta = sign |Z| scale: the N(0, scale^2) density doubled on one side of 0.
      const [from, to] = component.sign === 1 ? [Math.max(lower, 0), upper] : [lower, Math.min(upper, 0)];
      const part = normalPartial(0, component.scale, standardError, threshold, from, to);
      return { probability: 2 * part.probability, effectMoment: 2 * part.effectMoment };
    }
    case "truncatedNormal": {
      const mass = normalPartial(
        component.mean,
        component.scale,
        standardError,
        Number.NEGATIVE_INFINITY,
        component.lower,
        component.upper,
      ).probability;
      if (!(mass > 0)) return zeroPartial;
      const part = normalPartial(
        component.mean,
        component.scale,
        standardError,
        threshold,
        Math.max(lower, component.lower),
        Math.min(upper, component.upper),
      );
      return { probability: part.probability / mass, effectMoment: part.effectMoment / mass };
    }
    case "uniform":
      return uniformPartial(component.lower, component.upper, standardError, threshold, lower, upper);
    case "halfT":
      return halfTPartial(
        component.sign,
        component.scale,
        component.df,
        standardError,
        threshold,
        lower,
        upper,
      );
    default: {
      const unknown: never = component;
      return unknown;
    }
  }
}

/**
 * theta ~ N(mean, scale^2) restricted to (lower, upper] (not renormalised). With u = (theta - mean)/scale,
 * c = (mean - t)/s, d = scale/s: P = P(u in (bl, bu], y > t) and
 * E[theta 1{...}] = mean P + scale (J(bl) - J(bu)), J(b) = int_b^inf u phi(u) Phi(c + d u) du
 * = phi(b) Phi(c + d b) + (d/r) phi(c/r) Phi(-(r b + c d / r)), r = sqrt(1 + d^2).
 */
function normalPartial(
  mean: number,
  scale: number,
  standardError: number,
  threshold: number,
  lower: number,
  upper: number,
): ShippingPartial {
  if (!(lower < upper)) return zeroPartial;
  if (lower === Number.NEGATIVE_INFINITY && upper === Number.POSITIVE_INFINITY) {
    // Whole line: y ~ N(mean, scale^2 + s^2), E[theta 1{y > t}] = mean P + scale^2 phi(k) / sd_y.
    const totalSd = Math.hypot(scale, standardError);
    const standardized = (mean - threshold) / totalSd;
    const probability = normalCdf(standardized);
    return {
      probability,
      effectMoment: mean * probability + ((scale * scale) / totalSd) * normalPdf(standardized),
    };
  }
  const lowerStandard = (lower - mean) / scale;
  const upperStandard = (upper - mean) / scale;
  const totalSd = Math.hypot(scale, standardError);
  const thresholdStandard = (threshold - mean) / totalSd;
  const correlation = scale / totalSd;
  const probability = Math.max(
    0,
    bivariateNormalUpperProbability(lowerStandard, thresholdStandard, correlation) -
      bivariateNormalUpperProbability(upperStandard, thresholdStandard, correlation),
  );
  const c = (mean - threshold) / standardError;
  const d = scale / standardError;
  const r = Math.hypot(1, d);
  const tailMoment = (b: number): number => {
    if (b === Number.POSITIVE_INFINITY) return 0;
    const closing = (d / r) * normalPdf(c / r) * normalCdf(-(r * b + (c * d) / r));
    if (b === Number.NEGATIVE_INFINITY) return closing;
    return normalPdf(b) * normalCdf(c + d * b) + closing;
  };
  const effectMoment = mean * probability + scale * (tailMoment(lowerStandard) - tailMoment(upperStandard));
  return { probability, effectMoment };
}

/** Antiderivative of Phi(x): x Phi(x) + phi(x); for x > 0 written as x + A(-x) to avoid cancellation. */
function cdfAntiderivative(x: number): number {
  if (x > 0) return x + cdfAntiderivative(-x);
  return x * normalCdf(x) + normalPdf(x);
}

/** Antiderivative of x Phi(x): ((x^2 - 1) Phi(x) + x phi(x)) / 2; B(x) = (x^2 - 1)/2 - B(-x). */
function weightedCdfAntiderivative(x: number): number {
  if (x > 0) return (x * x - 1) / 2 - weightedCdfAntiderivative(-x);
  return ((x * x - 1) * normalCdf(x) + x * normalPdf(x)) / 2;
}

function uniformPartial(
  componentLower: number,
  componentUpper: number,
  standardError: number,
  threshold: number,
  lower: number,
  upper: number,
): ShippingPartial {
  if (componentUpper === componentLower) {
    return componentPartial({ kind: "point", at: componentLower }, standardError, threshold, lower, upper);
  }
  const from = Math.max(componentLower, lower);
  const to = Math.min(componentUpper, upper);
  if (!(from < to)) return zeroPartial;
  const density = 1 / (componentUpper - componentLower);
  if (threshold === Number.NEGATIVE_INFINITY) {
    return { probability: density * (to - from), effectMoment: (density * (to - from) * (to + from)) / 2 };
  }
  if (threshold === Number.POSITIVE_INFINITY) return zeroPartial;
  // theta = t + s x: int Phi((theta - t)/s) dtheta = s [A(x)], int theta Phi dtheta = s t [A] + s^2 [B].
  const fromStandard = (from - threshold) / standardError;
  const toStandard = (to - threshold) / standardError;
  const spanA = cdfAntiderivative(toStandard) - cdfAntiderivative(fromStandard);
  const spanB = weightedCdfAntiderivative(toStandard) - weightedCdfAntiderivative(fromStandard);
  const probability = density * standardError * spanA;
  const effectMoment = density * (standardError * threshold * spanA + standardError * standardError * spanB);
  return { probability, effectMoment };
}

function halfTPartial(
  sign: 1 | -1,
  scale: number,
  degreesOfFreedom: number,
  standardError: number,
  threshold: number,
  lower: number,
  upper: number,
): ShippingPartial {
  // Work on |theta| = x >= 0 with density (2/scale) f_t(x/scale); theta = sign x.
  const [from, to] =
    sign === 1
      ? [Math.max(lower, 0), upper]
      : [Math.max(-upper, 0), lower === Number.NEGATIVE_INFINITY ? Infinity : -lower];
  if (!(from < to)) return zeroPartial;
  const key = `${sign} ${scale} ${degreesOfFreedom} ${standardError} ${threshold} ${from} ${to}`;
  const cached = halfTCache.get(key);
  if (cached !== undefined) return cached;
  const unitDensity = studentTDensityFunction(degreesOfFreedom);
  const density = (x: number) => (2 / scale) * unitDensity(x / scale);
  const ship = (x: number) => normalCdf((sign * x - threshold) / standardError);
  // Break the range where the integrand changes fastest: at the threshold (where the ship
  // probability steps, over a width s) and at a few scales, so each piece is smooth.
  const breaks = [from, to];
  const thresholdOnSide = sign * threshold;
  for (const point of [
    thresholdOnSide - 4 * standardError,
    thresholdOnSide,
    thresholdOnSide + 4 * standardError,
    scale,
    4 * scale,
  ]) {
    if (point > from && point < to) breaks.push(point);
  }
  breaks.sort((left, right) => left - right);
  let probability = 0;
  let magnitudeMoment = 0;
  for (let i = 0; i + 1 < breaks.length; i++) {
    const a = breaks[i]!;
    const b = breaks[i + 1]!;
    if (!(a < b)) continue;
    const part = integrateMassAndMoment((x) => density(x) * ship(x), a, b, {
      absoluteTolerance: 1e-15,
      relativeTolerance: 1e-12,
      tailScale: Math.max(scale, a),
    });
    probability += part.mass;
    magnitudeMoment += part.moment;
  }
  const result = { probability, effectMoment: sign * magnitudeMoment };
  if (halfTCache.size >= halfTCacheLimit) halfTCache.clear();
  halfTCache.set(key, result);
  return result;
}

/**
 * Half-t partials already computed, by component, SE, threshold and range. The calibration asks
 * for the same ones many times (its sensitivity scenarios that change only the win rate keep the
 * components and revisit the same grid of designs); the function is pure, so a bounded memo
 * changes no result.
 */
const halfTCache = new Map<string, ShippingPartial>();
const halfTCacheLimit = 100_000;

/**
 * Expected estimate shipped per test, E[y 1{y > threshold}]: the claimed lift. The noise part
 * E[e 1{theta + e > t}] = s^2 f_y(t) (Stein's identity for a normal error), f_y the prior
 * predictive density of y at the threshold, so E[y 1{ship}] = E[theta 1{ship}] + s^2 f_y(t).
 * Its ratio to expectedShippedEffect is the exaggeration of shipped wins.
 */
export function expectedShippedEstimate(
  prior: EffectPrior,
  standardError: number,
  threshold: number,
): number {
  const effect = expectedShippedEffect(prior, standardError, threshold);
  if (Number.isNaN(effect)) return effect;
  if (!Number.isFinite(threshold)) return effect;
  return effect + standardError * standardError * predictiveDensity(prior, standardError, threshold);
}

/** Prior predictive density of the estimate y at `at`: int f(theta) phi_s(at - theta) dtheta. */
export function predictiveDensity(prior: EffectPrior, standardError: number, at: number): number {
  if (!(standardError > 0) || !Number.isFinite(standardError) || Number.isNaN(at)) return Number.NaN;
  let density = 0;
  for (const { component, weight } of prior.components) {
    if (weight === 0) continue;
    density += weight * componentPredictiveDensity(component, standardError, at);
  }
  return density;
}

function componentPredictiveDensity(component: PriorComponent, standardError: number, at: number): number {
  const s = standardError;
  switch (component.kind) {
    case "point":
      return normalPdf((at - component.at) / s) / s;
    case "normal": {
      const totalSd = Math.hypot(component.scale, s);
      return normalPdf((at - component.mean) / totalSd) / totalSd;
    }
    case "uniform": {
      if (component.upper === component.lower) return normalPdf((at - component.lower) / s) / s;
      // Phi((at - l)/s) - Phi((at - u)/s), written on the smaller tail to keep precision.
      const upperZ = (at - component.lower) / s;
      const lowerZ = (at - component.upper) / s;
      const mass =
        lowerZ > 0 ? normalCdf(-lowerZ) - normalCdf(-upperZ) : normalCdf(upperZ) - normalCdf(lowerZ);
      return mass / (component.upper - component.lower);
    }
    case "halfNormal":
    case "truncatedNormal": {
      const [mean, scale, lower, upper] =
        component.kind === "halfNormal"
          ? component.sign === 1
            ? [0, component.scale, 0, Number.POSITIVE_INFINITY]
            : [0, component.scale, Number.NEGATIVE_INFINITY, 0]
          : [component.mean, component.scale, component.lower, component.upper];
      const totalSd = Math.hypot(scale, s);
      // Normal-normal: theta | y ~ N(posteriorMean, posteriorSd^2); restrict to [lower, upper].
      const posteriorMean = mean + ((scale * scale) / (totalSd * totalSd)) * (at - mean);
      const posteriorSd = (scale * s) / totalSd;
      const inside = normalMass((lower - posteriorMean) / posteriorSd, (upper - posteriorMean) / posteriorSd);
      const priorMass = normalMass((lower - mean) / scale, (upper - mean) / scale);
      return ((normalPdf((at - mean) / totalSd) / totalSd) * inside) / priorMass;
    }
    case "halfT": {
      const density = (x: number) =>
        (2 / component.scale) * studentTDensity(x / component.scale, component.df);
      const kernel = (x: number) => density(x) * (normalPdf((at - component.sign * x) / s) / s);
      const centre = component.sign * at;
      const breaks = [0, Math.max(0, centre - 6 * s), Math.max(0, centre + 6 * s)];
      let total = 0;
      for (let i = 0; i + 1 < breaks.length; i++)
        total += integrateAdaptive(kernel, breaks[i]!, breaks[i + 1]!);
      return (
        total +
        integrateAdaptive(kernel, breaks[2]!, Number.POSITIVE_INFINITY, { tailScale: component.scale })
      );
    }
    default: {
      const unknown: never = component;
      return unknown;
    }
  }
}

/** Phi(b) - Phi(a) for a <= b, on the smaller tail. */
function normalMass(a: number, b: number): number {
  return a > 0 ? normalCdf(-a) - normalCdf(-b) : normalCdf(b) - normalCdf(a);
}
