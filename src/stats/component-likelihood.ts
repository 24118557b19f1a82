/**
 * Marginal likelihood of one summary (y, s) under one prior component, in log space:
 * log L = log int N(y; theta, s^2) f(theta) dtheta (statistics.md section 5; Stephens 2017,
 * "False discovery rates: a new deal", Biostatistics 18:275, section 2). Kernels: they return NaN
 * outside their domain and never throw.
 *
 * - point at a: N(y; a, s^2)
 * - normal N(m, t^2): N(y; m, s^2 + t^2)
 * - uniform [l, u]: (Phi((u - y)/s) - Phi((l - y)/s)) / (u - l)
 * - half-normal of scale t on one side: 2 N(y; 0, s^2 + t^2) P(side | y) under the normal prior
 * - truncated normal N(m, t^2) on [l, u]: N(y; m, s^2 + t^2) P_post([l, u]) / P_prior([l, u])
 * Half-t components have no closed form and are not handled here (NaN).
 */
import { normalCdf, normalLogPdf, normalSurvival } from "./distributions.ts";
import type { PriorComponent } from "./effect-prior.ts";

// Beyond this many standard deviations the Mills-ratio continued fraction is used for the tail:
// it converges fast there, and the cdf itself underflows near 38.
const millsRatioThreshold = 8;

/**
 * log(1 - Phi(x)) = log Q(x), finite for every finite x. For large x it uses the continued
 * fraction of the Mills ratio Q(x)/phi(x) = 1/(x + 1/(x + 2/(x + 3/(x + ...)))) (Abramowitz &
 * Stegun 26.2.14), evaluated bottom-up with 40 terms (relative error below 1e-15 for x >= 8).
 */
export function logNormalUpperTail(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  if (x === Number.POSITIVE_INFINITY) return Number.NEGATIVE_INFINITY;
  if (x < millsRatioThreshold) {
    // For very negative x, Q is close to 1: log1p of -Phi(x) keeps the small difference.
    if (x < -1) return Math.log1p(-normalCdf(x));
    return Math.log(normalSurvival(x));
  }
  return normalLogPdf(x) + Math.log(millsRatio(x));
}

/** log Phi(x), finite for every finite x. */
export function logNormalCdf(x: number): number {
  return logNormalUpperTail(-x);
}

function millsRatio(x: number): number {
  let fraction = x;
  for (let term = 40; term >= 1; term--) fraction = x + term / fraction;
  return 1 / fraction;
}

/**
 * log(Phi(upper) - Phi(lower)) for standardized bounds lower <= upper, without cancellation:
 * both bounds in the upper tail use the survival function, both in the lower tail the cdf.
 */
export function logNormalIntervalProbability(lower: number, upper: number): number {
  if (Number.isNaN(lower) || Number.isNaN(upper) || lower > upper) return Number.NaN;
  if (lower === upper) return Number.NEGATIVE_INFINITY;
  if (lower >= 0) return logDifferenceOfExponentials(logNormalUpperTail(lower), logNormalUpperTail(upper));
  if (upper <= 0) return logDifferenceOfExponentials(logNormalCdf(upper), logNormalCdf(lower));
  // The bounds straddle 0: the probability is at least about min(Phi(upper), Q(lower)) - no cancellation.
  return Math.log1p(-normalCdf(lower) - normalSurvival(upper));
}

/** log(exp(a) - exp(b)) for a >= b. */
function logDifferenceOfExponentials(a: number, b: number): number {
  if (b === Number.NEGATIVE_INFINITY) return a;
  return a + Math.log(-Math.expm1(b - a));
}

/** log N(y; mean, variance). */
function logNormalDensity(y: number, mean: number, variance: number): number {
  const standardDeviation = Math.sqrt(variance);
  return normalLogPdf((y - mean) / standardDeviation) - Math.log(standardDeviation);
}

/** log of the marginal likelihood of (y, s) under `component`; NaN for half-t or bad input. */
export function componentLogLikelihood(component: PriorComponent, y: number, s: number): number {
  if (!(s > 0) || !Number.isFinite(y)) return Number.NaN;
  switch (component.kind) {
    case "point":
      return logNormalDensity(y, component.at, s * s);
    case "normal":
      return logNormalDensity(y, component.mean, s * s + component.scale * component.scale);
    case "uniform": {
      const width = component.upper - component.lower;
      if (!(width > 0)) return width === 0 ? logNormalDensity(y, component.lower, s * s) : Number.NaN;
      return (
        logNormalIntervalProbability((component.lower - y) / s, (component.upper - y) / s) - Math.log(width)
      );
    }
    case "halfNormal":
      // A half-normal is the normal N(0, t^2) truncated to one side.
      return component.sign > 0
        ? truncatedNormalLogLikelihood(y, s, 0, component.scale, 0, Number.POSITIVE_INFINITY)
        : truncatedNormalLogLikelihood(y, s, 0, component.scale, Number.NEGATIVE_INFINITY, 0);
    case "truncatedNormal":
      return truncatedNormalLogLikelihood(
        y,
        s,
        component.mean,
        component.scale,
        component.lower,
        component.upper,
      );
    case "halfT":
      return Number.NaN;
  }
}

/**
 * Under theta ~ N(m, t^2) restricted to [l, u] and y ~ N(theta, s^2):
 * log N(y; m, s^2 + t^2) + log P_post(l < theta < u) - log P_prior(l < theta < u),
 * where the unrestricted posterior is N((m s^2 + y t^2)/(s^2 + t^2), t^2 s^2/(s^2 + t^2)).
 */
function truncatedNormalLogLikelihood(
  y: number,
  s: number,
  mean: number,
  scale: number,
  lower: number,
  upper: number,
): number {
  if (!(scale > 0) || !(upper > lower)) return Number.NaN;
  const totalVariance = s * s + scale * scale;
  const posteriorMean = (mean * s * s + y * scale * scale) / totalVariance;
  const posteriorScale = (scale * s) / Math.sqrt(totalVariance);
  return (
    logNormalDensity(y, mean, totalVariance) +
    logNormalIntervalProbability(
      (lower - posteriorMean) / posteriorScale,
      (upper - posteriorMean) / posteriorScale,
    ) -
    logNormalIntervalProbability((lower - mean) / scale, (upper - mean) / scale)
  );
}

/** The marginal density itself (not in log space), for callers that want it directly. */
export function componentLikelihood(component: PriorComponent, y: number, s: number): number {
  return Math.exp(componentLogLikelihood(component, y, s));
}
