/**
 * The exact binomial: probabilities, tails and the Clopper-Pearson interval for a proportion.
 *
 * Clopper & Pearson (1934), "The use of confidence or fiducial limits illustrated in the case of
 * the binomial", Biometrika 26:404. The interval is the set of p not rejected by either one-sided
 * exact test at level (1 - level) / 2; it equals R `binom.test(x, n)$conf.int` (which writes it
 * with beta quantiles). Probabilities use Loader's saddle-point form (Loader 2000, "Fast and
 * accurate computation of binomial probabilities"), the algorithm of R `dbinom`, so that tails
 * keep their relative accuracy far from the mode.
 *
 * Example: clopperPearsonInterval(3, 60) -> { lower: 0.010438..., upper: 0.13923... }.
 * Cost: O(n) per tail at worst; the interval bisects on p (about 60-200 tail evaluations).
 */
import { requireOpenUnit, StatsInputError } from "./errors.ts";

const logTwoPi = 1.8378770664093453;

/** log(n!) - log(sqrt(2 pi n) (n/e)^n), the error of Stirling's formula (Loader 2000). */
function stirlingError(n: number): number {
  if (n <= 15) {
    if (n === 0) return 0;
    // Exact log factorial as a sum of logs: cancellation costs ~1e-13 relative, ample here.
    let logFactorial = 0;
    for (let k = 2; k <= n; k++) logFactorial += Math.log(k);
    return logFactorial - (n + 0.5) * Math.log(n) + n - 0.5 * logTwoPi;
  }
  const s0 = 1 / 12;
  const s1 = 1 / 360;
  const s2 = 1 / 1260;
  const s3 = 1 / 1680;
  const s4 = 1 / 1188;
  const nn = n * n;
  if (n > 500) return (s0 - s1 / nn) / n;
  if (n > 80) return (s0 - (s1 - s2 / nn) / nn) / n;
  if (n > 35) return (s0 - (s1 - (s2 - s3 / nn) / nn) / nn) / n;
  return (s0 - (s1 - (s2 - (s3 - s4 / nn) / nn) / nn) / nn) / n;
}

/** Deviance term x log(x / m) + m - x, by a series when x is near m (Loader 2000). */
function devianceTerm(x: number, mean: number): number {
  if (Math.abs(x - mean) < 0.1 * (x + mean)) {
    let v = (x - mean) / (x + mean);
    let sum = (x - mean) * v;
    let term = 2 * x * v;
    v *= v;
    for (let j = 1; j < 1000; j++) {
      term *= v;
      const next = sum + term / (2 * j + 1);
      if (next === sum) return next;
      sum = next;
    }
    return sum;
  }
  return x * Math.log(x / mean) + mean - x;
}

/** P(X = k) for X ~ Binomial(n, p); a kernel (NaN outside the domain). */
export function binomialProbability(k: number, n: number, p: number): number {
  if (!Number.isInteger(n) || n < 0 || !(p >= 0 && p <= 1) || Number.isNaN(k)) return Number.NaN;
  if (!Number.isInteger(k) || k < 0 || k > n) return 0;
  const q = 1 - p;
  if (p === 0) return k === 0 ? 1 : 0;
  if (q === 0) return k === n ? 1 : 0;
  if (k === 0) {
    if (n === 0) return 1;
    return Math.exp(p < 0.1 ? -devianceTerm(n, n * q) - n * p : n * Math.log(q));
  }
  if (k === n) return Math.exp(q < 0.1 ? -devianceTerm(n, n * p) - n * q : n * Math.log(p));
  const logCore =
    stirlingError(n) -
    stirlingError(k) -
    stirlingError(n - k) -
    devianceTerm(k, n * p) -
    devianceTerm(n - k, n * q);
  const logScale = logTwoPi + Math.log(k) + Math.log1p(-k / n);
  return Math.exp(logCore - 0.5 * logScale);
}

// Terms past the mode shrink geometrically; stop once they no longer change the sum.
function sumOutward(from: number, step: 1 | -1, n: number, p: number): number {
  const mode = Math.floor((n + 1) * p);
  let total = 0;
  for (let k = from; k >= 0 && k <= n; k += step) {
    const term = binomialProbability(k, n, p);
    total += term;
    const pastMode = step === 1 ? k > mode : k < mode;
    if (pastMode && term <= total * 1e-17) break;
  }
  return total;
}

/** P(X <= k) for X ~ Binomial(n, p), summing whichever tail is smaller. */
export function binomialLowerTail(k: number, n: number, p: number): number {
  if (!Number.isInteger(n) || n < 0 || !(p >= 0 && p <= 1) || Number.isNaN(k)) return Number.NaN;
  const floorK = Math.floor(k);
  if (floorK < 0) return 0;
  if (floorK >= n) return 1;
  if (floorK < n * p) return Math.min(1, sumOutward(floorK, -1, n, p));
  return Math.max(0, 1 - sumOutward(floorK + 1, 1, n, p));
}

/** P(X >= k) for X ~ Binomial(n, p), summing whichever tail is smaller. */
export function binomialUpperTail(k: number, n: number, p: number): number {
  if (!Number.isInteger(n) || n < 0 || !(p >= 0 && p <= 1) || Number.isNaN(k)) return Number.NaN;
  const ceilK = Math.ceil(k);
  if (ceilK <= 0) return 1;
  if (ceilK > n) return 0;
  if (ceilK > n * p) return Math.min(1, sumOutward(ceilK, 1, n, p));
  return Math.max(0, 1 - sumOutward(ceilK - 1, -1, n, p));
}

export interface ProportionInterval {
  /** Observed share successes / trials. */
  readonly estimate: number;
  readonly lower: number;
  readonly upper: number;
  /** Two-sided confidence level. */
  readonly level: number;
  readonly method: "clopper-pearson";
}

// Bisection on p of a tail that is monotone in p; 200 halvings reach below 1e-60, and the loop
// stops earlier once the bracket is below double precision of its midpoint.
function solveIncreasing(target: number, tail: (p: number) => number): number {
  let low = 0;
  let high = 1;
  for (let iteration = 0; iteration < 200; iteration++) {
    const middle = 0.5 * (low + high);
    if (middle <= low || middle >= high) break;
    if (tail(middle) < target) low = middle;
    else high = middle;
  }
  return 0.5 * (low + high);
}

/**
 * Exact two-sided confidence interval for a binomial proportion (Clopper & Pearson 1934).
 * lower solves P(X >= x | p) = (1 - level)/2 (0 when x = 0); upper solves
 * P(X <= x | p) = (1 - level)/2 (1 when x = n). Matches R binom.test(x, n, conf.level = level).
 */
export function clopperPearsonInterval(successes: number, trials: number, level = 0.95): ProportionInterval {
  if (!Number.isInteger(trials) || trials < 1)
    throw new StatsInputError("trials", "a positive integer", trials);
  if (!Number.isInteger(successes) || successes < 0 || successes > trials) {
    throw new StatsInputError("successes", `an integer between 0 and trials (${trials})`, successes);
  }
  requireOpenUnit("level", level);
  const tailArea = (1 - level) / 2;
  const lower =
    successes === 0 ? 0 : solveIncreasing(tailArea, (p) => binomialUpperTail(successes, trials, p));
  // P(X <= x | p) decreases in p, so solve on its complement direction.
  const upper =
    successes === trials ? 1 : solveIncreasing(-tailArea, (p) => -binomialLowerTail(successes, trials, p));
  return { estimate: successes / trials, lower, upper, level, method: "clopper-pearson" };
}
