/**
 * Numerical integration used to take expectations over a prior of true effects: Gauss-Legendre
 * rules, an adaptive Gauss-Legendre integrator for finite and half-infinite ranges, the
 * bivariate normal upper orthant probability and the Student t density.
 *
 * - Gauss-Legendre nodes and weights are computed by Newton's iteration on the Legendre
 *   recurrence (Press et al., Numerical Recipes, 3rd ed., section 4.6), so no table is copied.
 * - `integrateAdaptive` bisects an interval until an n-point rule on the whole interval agrees
 *   with the same rule on its two halves (the classic adaptive scheme; Davis & Rabinowitz,
 *   Methods of Numerical Integration, 2nd ed., section 6.2). A half-infinite range [a, inf) is
 *   mapped to [0, 1) by x = a + scale u / (1 - u), which keeps densities with polynomial tails
 *   (the half-t) smooth near u = 1.
 * - `bivariateNormalUpperProbability` is Genz's (2004, "Numerical computation of rectangular
 *   bivariate and trivariate normal and t probabilities", Statistics and Computing 14:251)
 *   method, built on Drezner & Wesolowsky (1990, J. Statist. Comput. Simul. 35:101).
 * Kernels: they return NaN outside their domain and never throw.
 */
import { normalCdf } from "./distributions.ts";

export interface QuadratureRule {
  /** Nodes on [-1, 1], ascending. */
  readonly nodes: readonly number[];
  readonly weights: readonly number[];
}

const ruleCache = new Map<number, QuadratureRule>();

/** The n-point Gauss-Legendre rule on [-1, 1] (exact for polynomials of degree 2n - 1). */
export function gaussLegendreRule(pointCount: number): QuadratureRule {
  const cached = ruleCache.get(pointCount);
  if (cached) return cached;
  const nodes = new Array<number>(pointCount).fill(0);
  const weights = new Array<number>(pointCount).fill(0);
  for (let i = 0; i < pointCount; i++) {
    // Tricomi's initial guess for the i-th root, then Newton on P_n.
    let x = Math.cos((Math.PI * (i + 0.75)) / (pointCount + 0.5));
    let derivative = 0;
    for (let iteration = 0; iteration < 100; iteration++) {
      let previous = 1;
      let current = x;
      for (let k = 2; k <= pointCount; k++) {
        const next = ((2 * k - 1) * x * current - (k - 1) * previous) / k;
        previous = current;
        current = next;
      }
      if (pointCount === 1) {
        current = x;
        previous = 1;
      }
      derivative = (pointCount * (x * current - previous)) / (x * x - 1);
      const step = current / derivative;
      x -= step;
      if (Math.abs(step) < 1e-16) break;
    }
    nodes[pointCount - 1 - i] = x;
    weights[pointCount - 1 - i] = 2 / ((1 - x * x) * derivative * derivative);
  }
  const rule = { nodes, weights };
  ruleCache.set(pointCount, rule);
  return rule;
}

/** Sum of f over the rule mapped to [a, b]. */
export function integrateFixed(f: (x: number) => number, a: number, b: number, rule: QuadratureRule): number {
  const half = (b - a) / 2;
  const middle = (a + b) / 2;
  let sum = 0;
  for (let i = 0; i < rule.nodes.length; i++) sum += rule.weights[i]! * f(middle + half * rule.nodes[i]!);
  return sum * half;
}

export interface AdaptiveOptions {
  /** Absolute error target for the whole integral. */
  readonly absoluteTolerance?: number;
  /** Relative error target for the whole integral. */
  readonly relativeTolerance?: number;
  /** Scale of the map for a half-infinite range (the width where most of the mass lies). */
  readonly tailScale?: number;
  /** Largest bisection depth. */
  readonly maximumDepth?: number;
}

const adaptiveRule = gaussLegendreRule(10);

/**
 * Integral of f over [a, b], with b = +Infinity allowed (and a = -Infinity, by reflection).
 * Adaptive bisection with a 10-point Gauss-Legendre rule; the error estimate on each piece is
 * the difference between the rule on the piece and on its two halves.
 */
export function integrateAdaptive(
  f: (x: number) => number,
  a: number,
  b: number,
  options: AdaptiveOptions = {},
): number {
  if (Number.isNaN(a) || Number.isNaN(b)) return Number.NaN;
  if (a === b) return 0;
  if (a > b) return -integrateAdaptive(f, b, a, options);
  const absoluteTolerance = options.absoluteTolerance ?? 1e-14;
  const relativeTolerance = options.relativeTolerance ?? 1e-11;
  const maximumDepth = options.maximumDepth ?? 40;
  const scale = options.tailScale ?? 1;
  if (a === Number.NEGATIVE_INFINITY) {
    if (b === Number.POSITIVE_INFINITY) {
      return (
        integrateAdaptive(f, Number.NEGATIVE_INFINITY, 0, options) +
        integrateAdaptive(f, 0, Number.POSITIVE_INFINITY, options)
      );
    }
    return integrateAdaptive((x) => f(-x), -b, Number.POSITIVE_INFINITY, options);
  }
  let g = f;
  let lower = a;
  let upper = b;
  if (b === Number.POSITIVE_INFINITY) {
    // x = a + scale u / (1 - u), dx = scale / (1 - u)^2.
    g = (u) => {
      const complement = 1 - u;
      if (complement <= 0) return 0;
      const value = f(a + (scale * u) / complement);
      return value === 0 ? 0 : (value * scale) / (complement * complement);
    };
    lower = 0;
    upper = 1;
  }
  const whole = integrateFixed(g, lower, upper, adaptiveRule);
  const target = Math.max(absoluteTolerance, relativeTolerance * Math.abs(whole));
  return refine(g, lower, upper, whole, target, maximumDepth);
}

function refine(
  g: (x: number) => number,
  a: number,
  b: number,
  whole: number,
  target: number,
  depthLeft: number,
): number {
  const middle = (a + b) / 2;
  const left = integrateFixed(g, a, middle, adaptiveRule);
  const right = integrateFixed(g, middle, b, adaptiveRule);
  const halves = left + right;
  if (depthLeft <= 0 || Math.abs(halves - whole) <= target) return halves;
  return (
    refine(g, a, middle, left, target / Math.SQRT2, depthLeft - 1) +
    refine(g, middle, b, right, target / Math.SQRT2, depthLeft - 1)
  );
}

/**
 * P(X > h, Y > k) for a standard bivariate normal with correlation rho in [-1, 1]
 * (Genz 2004, algorithm of Drezner & Wesolowsky 1990; double-precision accuracy).
 */
export function bivariateNormalUpperProbability(h: number, k: number, rho: number): number {
  if (Number.isNaN(h) || Number.isNaN(k) || !(rho >= -1 && rho <= 1)) return Number.NaN;
  if (h === Number.POSITIVE_INFINITY || k === Number.POSITIVE_INFINITY) return 0;
  if (h === Number.NEGATIVE_INFINITY) return normalCdf(-k);
  if (k === Number.NEGATIVE_INFINITY) return normalCdf(-h);
  const absoluteRho = Math.abs(rho);
  const rule = gaussLegendreRule(absoluteRho < 0.3 ? 6 : absoluteRho < 0.75 ? 12 : 20);
  let hk = h * k;
  let total = 0;
  if (absoluteRho < 0.925) {
    const halfSquares = (h * h + k * k) / 2;
    const angle = Math.asin(rho);
    for (let i = 0; i < rule.nodes.length; i++) {
      const sine = Math.sin((angle * (1 + rule.nodes[i]!)) / 2);
      total += rule.weights[i]! * Math.exp((sine * hk - halfSquares) / (1 - sine * sine));
    }
    return (total * angle) / (4 * Math.PI) + normalCdf(-h) * normalCdf(-k);
  }
  let kk = k;
  if (rho < 0) {
    kk = -k;
    hk = -hk;
  }
  if (absoluteRho < 1) {
    const oneMinusSquare = (1 - rho) * (1 + rho);
    let a = Math.sqrt(oneMinusSquare);
    const differenceSquare = (h - kk) * (h - kk);
    const c = (4 - hk) / 8;
    const d = (12 - hk) / 16;
    const exponent = -(differenceSquare / oneMinusSquare + hk) / 2;
    if (exponent > -100) {
      total =
        a *
        Math.exp(exponent) *
        (1 -
          (c * (differenceSquare - oneMinusSquare) * (1 - (d * differenceSquare) / 5)) / 3 +
          (c * d * oneMinusSquare * oneMinusSquare) / 5);
    }
    if (-hk < 100) {
      const b = Math.sqrt(differenceSquare);
      total -=
        Math.exp(-hk / 2) *
        Math.sqrt(2 * Math.PI) *
        normalCdf(-b / a) *
        b *
        (1 - (c * differenceSquare * (1 - (d * differenceSquare) / 5)) / 3);
    }
    a /= 2;
    for (let i = 0; i < rule.nodes.length; i++) {
      const xs = (a * (rule.nodes[i]! + 1)) ** 2;
      const rs = Math.sqrt(1 - xs);
      const innerExponent = -(differenceSquare / xs + hk) / 2;
      if (innerExponent > -100) {
        total +=
          a *
          rule.weights[i]! *
          Math.exp(innerExponent) *
          (Math.exp((-hk * xs) / (2 * (1 + rs) ** 2)) / rs - (1 + c * xs * (1 + d * xs)));
      }
    }
    total = -total / (2 * Math.PI);
  }
  if (rho > 0) return Math.max(0, total + normalCdf(-Math.max(h, kk)));
  if (h >= kk) return Math.max(0, -total);
  const band = h < 0 ? normalCdf(kk) - normalCdf(h) : normalCdf(-h) - normalCdf(-kk);
  return Math.max(0, band - total);
}

// Lanczos approximation, g = 7, 9 terms (relative error below 1e-15 for x > 0;
// Press et al., Numerical Recipes, 3rd ed., section 6.1 uses the same construction).
const lanczosCoefficients = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
  12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
];

/** log Gamma(x) for x > 0. */
export function logGamma(x: number): number {
  if (!(x > 0)) return Number.NaN;
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x);
  const shifted = x - 1;
  let series = lanczosCoefficients[0]!;
  for (let i = 1; i < lanczosCoefficients.length; i++) series += lanczosCoefficients[i]! / (shifted + i);
  const base = shifted + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (shifted + 0.5) * Math.log(base) - base + Math.log(series);
}

const studentTLogConstants = new Map<number, number>();

/** Density of Student's t with df degrees of freedom at x. */
export function studentTDensity(x: number, degreesOfFreedom: number): number {
  if (!(degreesOfFreedom > 0) || Number.isNaN(x)) return Number.NaN;
  let logConstant = studentTLogConstants.get(degreesOfFreedom);
  if (logConstant === undefined) {
    // Cached: the optimiser evaluates the density millions of times at a handful of df.
    logConstant =
      logGamma((degreesOfFreedom + 1) / 2) -
      logGamma(degreesOfFreedom / 2) -
      0.5 * Math.log(degreesOfFreedom * Math.PI);
    if (studentTLogConstants.size < 64) studentTLogConstants.set(degreesOfFreedom, logConstant);
  }
  return Math.exp(logConstant - ((degreesOfFreedom + 1) / 2) * Math.log1p((x * x) / degreesOfFreedom));
}

/**
 * The density of Student's t with df degrees of freedom as a function of x, its constant worked
 * out once. When (df + 1) / 2 is a whole or half-whole number below 16 (the df a prior uses:
 * 1, 2, 3, ...) the power (1 + x^2/df)^(-(df+1)/2) is taken by multiplication (and one square
 * root) instead of exp and log, which the expectations over a half-t prior call millions of
 * times. Same values as studentTDensity to rounding.
 */
export function studentTDensityFunction(degreesOfFreedom: number): (x: number) => number {
  if (!(degreesOfFreedom > 0)) return () => Number.NaN;
  const constant = Math.exp(
    logGamma((degreesOfFreedom + 1) / 2) -
      logGamma(degreesOfFreedom / 2) -
      0.5 * Math.log(degreesOfFreedom * Math.PI),
  );
  const exponent = (degreesOfFreedom + 1) / 2;
  const whole = Math.floor(exponent);
  const half = exponent - whole === 0.5;
  if (exponent < 16 && (exponent === whole || half)) {
    return (x) => {
      const base = 1 + (x * x) / degreesOfFreedom;
      let power = half ? Math.sqrt(base) : 1;
      for (let k = 0; k < whole; k++) power *= base;
      return constant / power;
    };
  }
  return (x) => constant * Math.exp(-exponent * Math.log1p((x * x) / degreesOfFreedom));
}

/** int g(x) dx and int x g(x) dx over [a, b] (b may be +Infinity). */
export interface MassAndMoment {
  readonly mass: number;
  readonly moment: number;
}

/**
 * The integrals of g and of x g over [a, b] in one adaptive pass (the same nodes serve both;
 * a piece is accepted when both agree between the whole and its halves). b = +Infinity uses
 * the map x = a + scale u / (1 - u) of integrateAdaptive.
 */
export function integrateMassAndMoment(
  g: (x: number) => number,
  a: number,
  b: number,
  options: AdaptiveOptions = {},
): MassAndMoment {
  if (!(a < b)) return { mass: 0, moment: 0 };
  const absoluteTolerance = options.absoluteTolerance ?? 1e-14;
  const relativeTolerance = options.relativeTolerance ?? 1e-11;
  const maximumDepth = options.maximumDepth ?? 40;
  const scale = options.tailScale ?? 1;
  const infinite = b === Number.POSITIVE_INFINITY;
  const lower = infinite ? 0 : a;
  const upper = infinite ? 1 : b;
  const rule = adaptiveRule;
  const piece = (from: number, to: number): [number, number] => {
    const half = (to - from) / 2;
    const middle = (from + to) / 2;
    let mass = 0;
    let moment = 0;
    for (let i = 0; i < rule.nodes.length; i++) {
      const u = middle + half * rule.nodes[i]!;
      let x = u;
      let jacobian = 1;
      if (infinite) {
        const complement = 1 - u;
        x = a + (scale * u) / complement;
        jacobian = scale / (complement * complement);
      }
      const value = g(x);
      if (value === 0) continue;
      const weighted = rule.weights[i]! * value * jacobian;
      mass += weighted;
      moment += weighted * x;
    }
    return [mass * half, moment * half];
  };
  const whole = piece(lower, upper);
  const massTarget = Math.max(absoluteTolerance, relativeTolerance * Math.abs(whole[0]));
  const momentTarget = Math.max(absoluteTolerance, relativeTolerance * Math.abs(whole[1]));
  const refinePair = (
    from: number,
    to: number,
    estimate: [number, number],
    massGoal: number,
    momentGoal: number,
    depthLeft: number,
  ): [number, number] => {
    const middle = (from + to) / 2;
    const left = piece(from, middle);
    const right = piece(middle, to);
    const mass = left[0] + right[0];
    const moment = left[1] + right[1];
    if (
      depthLeft <= 0 ||
      (Math.abs(mass - estimate[0]) <= massGoal && Math.abs(moment - estimate[1]) <= momentGoal)
    ) {
      return [mass, moment];
    }
    const l = refinePair(from, middle, left, massGoal / Math.SQRT2, momentGoal / Math.SQRT2, depthLeft - 1);
    const r = refinePair(middle, to, right, massGoal / Math.SQRT2, momentGoal / Math.SQRT2, depthLeft - 1);
    return [l[0] + r[0], l[1] + r[1]];
  };
  const [mass, moment] = refinePair(lower, upper, whole, massTarget, momentTarget, maximumDepth);
  return { mass, moment };
}
