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

/** Upper tail of the chi-square distribution, P(X > x) with df degrees of freedom. */
export function chiSquareSurvival(x: number, df: number): number {
  if (!(df > 0) || Number.isNaN(x)) return Number.NaN;
  if (x <= 0) return 1;
  return 1 - jStat.chisquare.cdf(x, df);
}
