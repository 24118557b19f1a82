/**
 * One-sample Kolmogorov-Smirnov test of uniformity on (0, 1), two-sided, as R `ks.test(x, "punif")`.
 *
 * Used on the p-values of A/A tests: under a healthy pipeline they are uniform. Statistic
 * D = max_i max(i/n - u_(i), u_(i) - (i-1)/n). The exact p-value is Marsaglia, Tsang & Wang
 * (2003), "Evaluating Kolmogorov's Distribution", J. Stat. Softw. 8(18) (a matrix power, O(k^3 log n)
 * with k = floor(n D) + 1); the asymptotic one is Kolmogorov's limit
 * P(sqrt(n) D > x) = 2 sum_{k>=1} (-1)^(k-1) exp(-2 k^2 x^2) (with the Jacobi-theta form for x < 1).
 * Convention (R 4.2 `ks.test`): exact when n < 100 and there are no ties, asymptotic otherwise.
 *
 * Example: kolmogorovSmirnovUniform([0.1, 0.4, 0.7]) -> D = 0.3, pValue = 0.8 (approximately).
 */
import { StatsInputError } from "./errors.ts";

export type UniformityMethod = "exact" | "asymptotic";

export interface UniformityTestResult {
  readonly statistic: number;
  readonly pValue: number;
  readonly count: number;
  readonly method: UniformityMethod;
  readonly ties: boolean;
}

/** P(D_n < d) by Marsaglia, Tsang & Wang (2003), their published algorithm with exponent tracking. */
export function kolmogorovExactCdf(statistic: number, n: number): number {
  if (!(n >= 1) || Number.isNaN(statistic)) return Number.NaN;
  if (statistic <= 0) return 0;
  if (statistic >= 1) return 1;
  const k = Math.floor(n * statistic) + 1;
  const m = 2 * k - 1;
  const h = k - n * statistic;
  const matrix = new Float64Array(m * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) matrix[i * m + j] = i - j + 1 < 0 ? 0 : 1;
  for (let i = 0; i < m; i++) {
    matrix[i * m] = (matrix[i * m] as number) - h ** (i + 1);
    matrix[(m - 1) * m + i] = (matrix[(m - 1) * m + i] as number) - h ** (m - i);
  }
  matrix[(m - 1) * m] = (matrix[(m - 1) * m] as number) + (2 * h - 1 > 0 ? (2 * h - 1) ** m : 0);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < m; j++) {
      if (i - j + 1 > 0) {
        let value = matrix[i * m + j] as number;
        for (let g = 1; g <= i - j + 1; g++) value /= g;
        matrix[i * m + j] = value;
      }
    }
  }
  const { values, exponent } = matrixPower(matrix, 0, m, n);
  let s = values[(k - 1) * m + k - 1] as number;
  let decimalExponent = exponent;
  for (let i = 1; i <= n; i++) {
    s = (s * i) / n;
    if (s < 1e-140) {
      s *= 1e140;
      decimalExponent -= 140;
    }
  }
  return s * 10 ** decimalExponent;
}

function multiply(a: Float64Array, b: Float64Array, m: number): Float64Array {
  const product = new Float64Array(m * m);
  for (let i = 0; i < m; i++) {
    for (let k = 0; k < m; k++) {
      const aik = a[i * m + k] as number;
      if (aik === 0) continue;
      for (let j = 0; j < m; j++)
        product[i * m + j] = (product[i * m + j] as number) + aik * (b[k * m + j] as number);
    }
  }
  return product;
}

// Powers by squaring; entries are rescaled by 1e-140 when the centre grows past 1e140, and the
// decimal exponent carried alongside (as in the published code).
function matrixPower(
  a: Float64Array,
  exponentA: number,
  m: number,
  n: number,
): { values: Float64Array; exponent: number } {
  if (n === 1) return { values: a.slice(), exponent: exponentA };
  const half = matrixPower(a, exponentA, m, Math.floor(n / 2));
  const squared = multiply(half.values, half.values, m);
  const squaredExponent = 2 * half.exponent;
  let values: Float64Array;
  let exponent: number;
  if (n % 2 === 0) {
    values = squared;
    exponent = squaredExponent;
  } else {
    values = multiply(a, squared, m);
    exponent = exponentA + squaredExponent;
  }
  const centre = Math.floor(m / 2);
  if ((values[centre * m + centre] as number) > 1e140) {
    for (let i = 0; i < m * m; i++) values[i] = (values[i] as number) * 1e-140;
    exponent += 140;
  }
  return { values, exponent };
}

/** P(sqrt(n) D > x) in the limit (Kolmogorov 1933), as R's pkstwo with a tighter tolerance. */
export function kolmogorovLimitSurvival(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  if (x <= 0) return 1;
  if (x < 1) {
    // Jacobi theta form: the alternating series converges slowly for small x.
    const z = -(Math.PI * Math.PI) / 8 / (x * x);
    const logX = Math.log(x);
    let sum = 0;
    for (let k = 1; k < 200; k += 2) sum += Math.exp(k * k * z - logX);
    return 1 - sum / 0.3989422804014327;
  }
  const z = -2 * x * x;
  let sign = -1;
  let previous = 0;
  let cdf = 1;
  for (let k = 1; k < 1000 && Math.abs(previous - cdf) > 1e-16; k++) {
    previous = cdf;
    cdf += 2 * sign * Math.exp(z * k * k);
    sign = -sign;
  }
  return 1 - cdf;
}

/** Two-sided one-sample Kolmogorov-Smirnov test of U(0, 1). */
export function kolmogorovSmirnovUniform(
  values: readonly number[],
  options: { readonly method?: UniformityMethod } = {},
): UniformityTestResult {
  const n = values.length;
  if (n < 1) throw new StatsInputError("values", "a non-empty list", n);
  for (const [index, value] of values.entries()) {
    if (!(value >= 0 && value <= 1)) throw new StatsInputError(`values[${index}]`, "between 0 and 1", value);
  }
  const sorted = [...values].sort((a, b) => a - b);
  let statistic = 0;
  let ties = false;
  for (let i = 0; i < n; i++) {
    const u = sorted[i] as number;
    if (i > 0 && u === sorted[i - 1]) ties = true;
    statistic = Math.max(statistic, (i + 1) / n - u, u - i / n);
  }
  const method: UniformityMethod = options.method ?? (n < 100 && !ties ? "exact" : "asymptotic");
  const pValue =
    method === "exact"
      ? 1 - kolmogorovExactCdf(statistic, n)
      : kolmogorovLimitSurvival(Math.sqrt(n) * statistic);
  return { statistic, pValue: Math.min(1, Math.max(0, pValue)), count: n, method, ties };
}
