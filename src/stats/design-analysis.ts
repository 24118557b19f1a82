/**
 * Design analysis of one test: power, Type S (sign) error and the exaggeration ratio (expected
 * Type M error) of a true effect D measured with standard error s at two-sided level alpha.
 * Gelman & Carlin (2014), "Beyond Power Calculations", Perspect. Psychol. Sci. 9:641; the
 * exaggeration ratio in closed form as in Lu, Qiu & Deng (2018), Br. J. Math. Stat. Psychol.
 * 72:1 (never by simulation). statistics.md section 3. With lambda = |D|/s and critical value z:
 *   p_hi = 1 - F(z - lambda), p_lo = F(-z - lambda), power = p_hi + p_lo, Type S = p_lo / power,
 *   exaggeration = [lambda p_hi + M(z - lambda) + M(z + lambda) - lambda p_lo] / (power lambda),
 * where F is the reference cdf and M(c) = int_c^inf t f(t) dt: phi(c) for the normal, and
 * (df + c^2) / (df - 1) f_df(c) for Student t with df > 1 (Gelman & Carlin's optional t
 * reference, their retrodesign function's df argument).
 * Example: designAnalysis({ effect: 2.8, standardError: 1 }) -> power 0.7995..., exaggeration 1.12...
 */
import {
  normalCdf,
  normalPdf,
  normalQuantile,
  studentTCdf,
  studentTPdf,
  studentTQuantile,
} from "./distributions.ts";
import { requireOpenUnit, requirePositive, StatsInputError } from "./errors.ts";
import { findRoot } from "./find-root.ts";

export interface DesignAnalysisInput {
  /** The true effect D assumed (non-zero; the analysis is symmetric in its sign). */
  readonly effect: number;
  /** The standard error s of the estimate. */
  readonly standardError: number;
  /** Two-sided level, default 0.05. */
  readonly alpha?: number;
  /** Degrees of freedom of a Student t reference (> 1); normal reference when absent. */
  readonly df?: number;
}

export interface DesignAnalysis {
  /** P(significant in either direction). */
  readonly power: number;
  /** P(significant with the wrong sign | significant). */
  readonly typeS: number;
  /** E(|estimate| / |D| | significant). */
  readonly exaggeration: number;
  /** The critical value of |estimate| / s. */
  readonly criticalValue: number;
  /** P(significant with the right sign). */
  readonly powerRightSign: number;
  /** P(significant with the wrong sign). */
  readonly powerWrongSign: number;
  readonly reference: "normal" | "studentT";
}

export const defaultAlpha = 0.05;

interface Reference {
  readonly cdf: (x: number) => number;
  readonly partialMean: (c: number) => number;
  readonly quantile: (p: number) => number;
  readonly name: "normal" | "studentT";
}

function reference(df: number | undefined): Reference {
  if (df === undefined)
    return { cdf: normalCdf, partialMean: normalPdf, quantile: normalQuantile, name: "normal" };
  return {
    cdf: (x) => studentTCdf(x, df),
    partialMean: (c) => ((df + c * c) / (df - 1)) * studentTPdf(c, df),
    quantile: (p) => studentTQuantile(p, df),
    name: "studentT",
  };
}

function validateCommon(alpha: number, df: number | undefined): void {
  requireOpenUnit("alpha", alpha);
  if (df !== undefined && !(Number.isFinite(df) && df > 1)) {
    throw new StatsInputError("df", "a number above 1 (the exaggeration needs a finite mean)", df);
  }
}

/** The analysis on the standardized scale lambda = |D| / s (a kernel: no validation). */
function analyseStandardized(lambda: number, alpha: number, df: number | undefined): DesignAnalysis {
  const ref = reference(df);
  const z = ref.quantile(1 - alpha / 2);
  const powerRightSign = 1 - ref.cdf(z - lambda);
  const powerWrongSign = ref.cdf(-z - lambda);
  const power = powerRightSign + powerWrongSign;
  const exaggeration =
    (lambda * powerRightSign +
      ref.partialMean(z - lambda) +
      ref.partialMean(z + lambda) -
      lambda * powerWrongSign) /
    (power * lambda);
  return {
    power,
    typeS: powerWrongSign / power,
    exaggeration,
    criticalValue: z,
    powerRightSign,
    powerWrongSign,
    reference: ref.name,
  };
}

export function designAnalysis(input: DesignAnalysisInput): DesignAnalysis {
  const alpha = input.alpha ?? defaultAlpha;
  validateCommon(alpha, input.df);
  if (!Number.isFinite(input.effect) || input.effect === 0) {
    throw new StatsInputError("effect", "a non-zero finite number", input.effect);
  }
  requirePositive("standardError", input.standardError);
  return analyseStandardized(Math.abs(input.effect) / input.standardError, alpha, input.df);
}

export interface PowerTargetInput {
  /** Target power, strictly between alpha and 1. */
  readonly power: number;
  readonly alpha?: number;
  readonly df?: number;
}

function standardizedEffectForPower(input: PowerTargetInput): { lambda: number; alpha: number } {
  const alpha = input.alpha ?? defaultAlpha;
  validateCommon(alpha, input.df);
  requireOpenUnit("power", input.power);
  if (input.power <= alpha) throw new StatsInputError("power", `above alpha (${alpha})`, input.power);
  const lambda = findRoot(
    (value) => analyseStandardized(value, alpha, input.df).power - input.power,
    1e-12,
    100,
  );
  return { lambda, alpha };
}

/** The true effect that has the target power at standard error s (e.g. 80 % power: 2.80 s). */
export function effectForPower(input: PowerTargetInput & { readonly standardError: number }): number {
  requirePositive("standardError", input.standardError);
  return standardizedEffectForPower(input).lambda * input.standardError;
}

/** The design analysis of a test run at the target power: the exaggeration to expect, and Type S. */
export function designAtPower(
  input: PowerTargetInput,
): DesignAnalysis & { readonly standardizedEffect: number } {
  const { lambda, alpha } = standardizedEffectForPower(input);
  return { ...analyseStandardized(lambda, alpha, input.df), standardizedEffect: lambda };
}
