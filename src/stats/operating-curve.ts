/**
 * The operating curve of a design: as the one-sided shipping threshold z moves, the share of
 * null tests shipped, 1 - F(z), against the share of real wins of size D shipped,
 * 1 - F(z - D/s), with F the reference distribution of the standardized estimate (normal, or
 * Student t with df as in design-analysis.ts). It is the ROC curve of the test (statistics.md
 * section 2). Its area is P(estimate of a win > estimate of a null) = int f(x) F(x + lambda) dx,
 * lambda = D/s; for the normal reference Phi(lambda / sqrt 2) (the binormal ROC area; Hanley &
 * McNeil 1982, Radiology 143:29).
 * Example: operatingCurve({ effect: 2.8, standardError: 1 }).area -> 0.9761... (Phi(1.98)).
 */
import {
  normalCdf,
  normalQuantile,
  normalSurvival,
  studentTCdf,
  studentTPdf,
  studentTQuantile,
} from "./distributions.ts";
import { requirePositive, StatsInputError } from "./errors.ts";
import { integrateAdaptive } from "./prior-quadrature.ts";

export interface OperatingCurveInput {
  /** True effect D of a real win, on the scale of the standard error. */
  readonly effect: number;
  readonly standardError: number;
  /** Degrees of freedom of a Student t reference (> 0); normal reference when absent. */
  readonly df?: number;
  /** Number of points along the curve (default 101, at least 3). */
  readonly points?: number;
}

export interface OperatingCurvePoint {
  /** One-sided threshold z* on y / s. */
  readonly threshold: number;
  /** The two-sided level with the same upper threshold, 2 (1 - F(z*)). */
  readonly alpha: number;
  /** Share of null tests shipped (false-win rate), 1 - F(z*). */
  readonly nullShipped: number;
  /** Share of real wins of size D shipped (one-sided power), 1 - F(z* - D/s). */
  readonly winsShipped: number;
}

export interface OperatingCurve {
  readonly reference: "normal" | "studentT";
  readonly points: readonly OperatingCurvePoint[];
  readonly area: number;
}

/** Two-sided levels at which `operatingPointsAtAlphas` reads the curve by default (common practice). */
export const conventionalAlphas: readonly number[] = [0.001, 0.01, 0.05, 0.1, 0.2, 0.5];

interface Resolved {
  readonly lambda: number;
  readonly survival: (x: number) => number;
  readonly upperQuantile: (p: number) => number;
  readonly df: number | undefined;
}

function resolve(input: Omit<OperatingCurveInput, "points">): Resolved {
  if (!Number.isFinite(input.effect) || input.effect <= 0) {
    throw new StatsInputError("effect", "a positive finite number (the size of a real win)", input.effect);
  }
  requirePositive("standardError", input.standardError);
  const lambda = input.effect / input.standardError;
  const df = input.df;
  if (df === undefined) {
    return { lambda, survival: normalSurvival, upperQuantile: (p) => -normalQuantile(p), df };
  }
  requirePositive("df", df);
  return {
    lambda,
    survival: (x) => studentTCdf(-x, df),
    upperQuantile: (p) => -studentTQuantile(p, df),
    df,
  };
}

function pointAt(resolved: Resolved, nullShipped: number): OperatingCurvePoint {
  const threshold = resolved.upperQuantile(nullShipped);
  return {
    threshold,
    alpha: Math.min(1, 2 * nullShipped),
    nullShipped,
    winsShipped: resolved.survival(threshold - resolved.lambda),
  };
}

function area(resolved: Resolved): number {
  const { lambda, df } = resolved;
  if (df === undefined) return normalCdf(lambda / Math.SQRT2);
  // P(T_win > T_null) with T_win = lambda + T: int f(x) F(x + lambda) dx over the line.
  const integrand = (x: number) => studentTPdf(x, df) * studentTCdf(x + lambda, df);
  return (
    integrateAdaptive(integrand, Number.NEGATIVE_INFINITY, 0, { tailScale: 1 }) +
    integrateAdaptive(integrand, 0, Number.POSITIVE_INFINITY, { tailScale: 1 })
  );
}

export function operatingCurve(input: OperatingCurveInput): OperatingCurve {
  const resolved = resolve(input);
  const count = input.points ?? 101;
  if (!Number.isInteger(count) || count < 3)
    throw new StatsInputError("points", "an integer of at least 3", count);
  const points: OperatingCurvePoint[] = [];
  // Evenly spaced in the share of nulls shipped, from 0 to 1, so the curve is drawn evenly.
  for (let index = 0; index < count; index++) points.push(pointAt(resolved, index / (count - 1)));
  return { reference: resolved.df === undefined ? "normal" : "studentT", points, area: area(resolved) };
}

/** Points of the operating curve at given two-sided levels (a null ships with probability alpha / 2). */
export function operatingPointsAtAlphas(
  input: Omit<OperatingCurveInput, "points">,
  alphas: readonly number[] = conventionalAlphas,
): readonly OperatingCurvePoint[] {
  const resolved = resolve(input);
  return alphas.map((alpha, index) => {
    if (!(alpha > 0 && alpha < 1))
      throw new StatsInputError(`alphas[${index}]`, "strictly between 0 and 1", alpha);
    return pointAt(resolved, alpha / 2);
  });
}

/** The curve a design calculator reports: 41 points, and the points at the conventional alphas. */
export interface DesignOperatingCurve extends OperatingCurve {
  readonly atConventionalAlphas: readonly OperatingCurvePoint[];
}

/** The operating curve of a design for a real win of `standardizedEffect` standard errors. */
export function designOperatingCurve(standardizedEffect: number, df?: number): DesignOperatingCurve {
  const size = { effect: standardizedEffect, standardError: 1, ...(df === undefined ? {} : { df }) };
  return { ...operatingCurve({ ...size, points: 41 }), atConventionalAlphas: operatingPointsAtAlphas(size) };
}
