/**
 * The operating curve of a design: as the one-sided shipping threshold z moves, the share of
 * null tests shipped, 1 - Phi(z), against the share of real wins of size D shipped,
 * 1 - Phi(z - D/s). It is the ROC curve of the test (statistics.md section 2); its area is
 * Phi(lambda / sqrt 2) with lambda = D/s (the binormal ROC area; Hanley & McNeil 1982).
 * Example: operatingCurve({ effect: 2.8, standardError: 1 }).area -> 0.97571... (Phi(1.98)).
 */
import { normalCdf, normalQuantile, normalSurvival } from "./distributions.ts";
import { requirePositive, StatsInputError } from "./errors.ts";

export interface OperatingCurveInput {
  /** True effect D of a real win, on the scale of the standard error. */
  readonly effect: number;
  readonly standardError: number;
  /** Number of points along the curve (default 101, at least 3). */
  readonly points?: number;
}

export interface OperatingCurvePoint {
  /** One-sided threshold z* on y / s. */
  readonly threshold: number;
  /** The two-sided level with the same upper threshold, 2 (1 - Phi(z*)). */
  readonly alpha: number;
  /** Share of null tests shipped (false-win rate), 1 - Phi(z*). */
  readonly nullShipped: number;
  /** Share of real wins of size D shipped (one-sided power), 1 - Phi(z* - D/s). */
  readonly winsShipped: number;
}

export interface OperatingCurve {
  readonly points: readonly OperatingCurvePoint[];
  readonly area: number;
}

export function operatingCurve(input: OperatingCurveInput): OperatingCurve {
  if (!Number.isFinite(input.effect) || input.effect <= 0) {
    throw new StatsInputError("effect", "a positive finite number (the size of a real win)", input.effect);
  }
  requirePositive("standardError", input.standardError);
  const count = input.points ?? 101;
  if (!Number.isInteger(count) || count < 3)
    throw new StatsInputError("points", "an integer of at least 3", count);
  const lambda = input.effect / input.standardError;
  const points: OperatingCurvePoint[] = [];
  // Evenly spaced in the share of nulls shipped, from 0 to 1, so the curve is drawn evenly.
  for (let index = 0; index < count; index++) {
    const nullShipped = index / (count - 1);
    const threshold = -normalQuantile(nullShipped);
    points.push({
      threshold,
      alpha: Math.min(1, 2 * nullShipped),
      nullShipped,
      winsShipped: normalSurvival(threshold - lambda),
    });
  }
  return { points, area: normalCdf(lambda / Math.SQRT2) };
}
