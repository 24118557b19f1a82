/**
 * The one adapter over jstat: every distribution function plumbline uses comes from here.
 * Kernels return NaN outside their domain (they never throw); procedures validate inputs.
 */
import jstatModule from "jstat";

const { jStat } = jstatModule as unknown as { jStat: JStatLike };

interface JStatLike {
  erfc(x: number): number;
  normal: { inv(p: number, mean: number, sd: number): number };
  studentt: { cdf(x: number, df: number): number; inv(p: number, df: number): number };
  noncentralt: { cdf(x: number, df: number, ncp: number): number };
  chisquare: { cdf(x: number, df: number): number };
  gammaln(x: number): number;
}

const inverseSqrtTwoPi = 0.3989422804014327;

/** Standard normal density phi(x). */
export function normalPdf(x: number): number {
  return inverseSqrtTwoPi * Math.exp(-0.5 * x * x);
}

/** log phi(x), exact for any finite x. */
export function normalLogPdf(x: number): number {
  return -0.9189385332046728 - 0.5 * x * x;
}

/** Standard normal cdf Phi(x). */
export function normalCdf(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  return 0.5 * jStat.erfc(-x / Math.SQRT2);
}

/** Upper tail 1 - Phi(x), computed without cancellation. */
export function normalSurvival(x: number): number {
  return normalCdf(-x);
}

/** log Phi(x), finite far into the lower tail. */
export function normalLogCdf(x: number): number {
  return Math.log(normalCdf(x));
}

/** Standard normal quantile Phi^-1(p). */
export function normalQuantile(p: number): number {
  if (Number.isNaN(p) || p < 0 || p > 1) return Number.NaN;
  if (p === 0) return Number.NEGATIVE_INFINITY;
  if (p === 1) return Number.POSITIVE_INFINITY;
  return jStat.normal.inv(p, 0, 1);
}

/** Student t cdf with df degrees of freedom. */
export function studentTCdf(x: number, df: number): number {
  if (!(df > 0)) return Number.NaN;
  return jStat.studentt.cdf(x, df);
}

/** Student t quantile. */
export function studentTQuantile(p: number, df: number): number {
  if (!(df > 0) || p < 0 || p > 1) return Number.NaN;
  return jStat.studentt.inv(p, df);
}

/** Noncentral t cdf P(T <= x) with df and noncentrality ncp. */
export function noncentralTCdf(x: number, df: number, ncp: number): number {
  if (!(df > 0)) return Number.NaN;
  return jStat.noncentralt.cdf(x, df, ncp);
}

/**
 * Upper tail of the chi-square distribution, P(X > x) with df degrees of freedom.
 * Computed as the regularized upper incomplete gamma Q(df/2, x/2) directly (series for the lower
 * part when x < a + 1, Lentz's continued fraction for the upper part otherwise; Press et al.,
 * Numerical Recipes, 3rd ed., section 6.2) so that tiny p-values keep their relative accuracy;
 * jstat's `1 - cdf` cancels to 0 below about 1e-16.
 */
export function chiSquareSurvival(x: number, df: number): number {
  if (!(df > 0) || Number.isNaN(x)) return Number.NaN;
  if (x <= 0) return 1;
  if (x === Number.POSITIVE_INFINITY) return 0;
  return regularizedUpperGamma(df / 2, x / 2);
}

const gammaIterationLimit = 10000;
const gammaRelativeTolerance = 1e-16;

function regularizedUpperGamma(shape: number, x: number): number {
  const logPrefactor = shape * Math.log(x) - x - jStat.gammaln(shape);
  if (x < shape + 1) {
    // Series for the lower regularized gamma P(a, x); Q = 1 - P has no cancellation here
    // because P < ~0.6 in this region.
    let term = 1 / shape;
    let sum = term;
    for (let k = 1; k < gammaIterationLimit; k++) {
      term *= x / (shape + k);
      sum += term;
      if (Math.abs(term) < Math.abs(sum) * gammaRelativeTolerance) break;
    }
    return 1 - Math.exp(logPrefactor) * sum;
  }
  // Modified Lentz evaluation of the continued fraction for Q(a, x).
  const tiny = 1e-300;
  let b = x + 1 - shape;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < gammaIterationLimit; i++) {
    const an = -i * (i - shape);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < gammaRelativeTolerance) break;
  }
  return Math.exp(logPrefactor) * h;
}
