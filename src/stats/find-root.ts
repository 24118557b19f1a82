/**
 * Brent's method for a root of a continuous function on a bracketing interval
 * (Brent 1973, "Algorithms for Minimization without Derivatives", ch. 4; the zeroin algorithm R's
 * uniroot also uses). Returns NaN when [lower, upper] does not bracket a sign change.
 * Example: findRoot((x) => x * x - 2, 0, 2) -> 1.4142135623730951.
 */
export function findRoot(
  f: (x: number) => number,
  lower: number,
  upper: number,
  tolerance = 1e-14,
  maximumIterations = 500,
): number {
  let a = lower;
  let b = upper;
  let fa = f(a);
  let fb = f(b);
  if (fa === 0) return a;
  if (fb === 0) return b;
  if (!(fa * fb < 0)) return Number.NaN;
  let c = a;
  let fc = fa;
  let d = b - a;
  let e = d;
  for (let iteration = 0; iteration < maximumIterations; iteration++) {
    if (fb * fc > 0) {
      c = a;
      fc = fa;
      d = b - a;
      e = d;
    }
    if (Math.abs(fc) < Math.abs(fb)) {
      a = b;
      b = c;
      c = a;
      fa = fb;
      fb = fc;
      fc = fa;
    }
    const step = 2 * Number.EPSILON * Math.abs(b) + 0.5 * tolerance * Math.max(1, Math.abs(b));
    const half = 0.5 * (c - b);
    if (Math.abs(half) <= step || fb === 0) return b;
    if (Math.abs(e) >= step && Math.abs(fa) > Math.abs(fb)) {
      // Inverse quadratic interpolation (secant when only two points differ).
      const s = fb / fa;
      let p: number;
      let q: number;
      if (a === c) {
        p = 2 * half * s;
        q = 1 - s;
      } else {
        const qa = fa / fc;
        const r = fb / fc;
        p = s * (2 * half * qa * (qa - r) - (b - a) * (r - 1));
        q = (qa - 1) * (r - 1) * (s - 1);
      }
      if (p > 0) q = -q;
      else p = -p;
      if (2 * p < Math.min(3 * half * q - Math.abs(step * q), Math.abs(e * q))) {
        e = d;
        d = p / q;
      } else {
        d = half;
        e = d;
      }
    } else {
      d = half;
      e = d;
    }
    a = b;
    fa = fb;
    b += Math.abs(d) > step ? d : half > 0 ? step : -step;
    fb = f(b);
  }
  return b;
}

/**
 * Where a continuous function that rises through 0 crosses it, searching upwards from `lower`:
 * `lower` itself when f(lower) >= 0; otherwise Brent's method on a bracket grown from 16 by
 * factors of 4 (sample sizes span many orders of magnitude); NaN when f is still negative
 * beyond `limit`. Example: findIncreasingRoot((n) => n - 1000, 2, 1e12) -> 1000.
 */
export function findIncreasingRoot(
  f: (x: number) => number,
  lower: number,
  limit: number,
  tolerance = 1e-12,
): number {
  if (f(lower) >= 0) return lower;
  let upper = Math.max(16, 2 * lower);
  while (f(upper) < 0) {
    upper *= 4;
    if (upper > limit) return Number.NaN;
  }
  return findRoot(f, lower, upper, tolerance);
}
