/**
 * Decision rules for the backlog forecast: ship when y > z* s (statistics.md section 7).
 * A two-sided level alpha that ships on the upper tail only has z* = Phi^-1(1 - alpha / 2)
 * (statistics.md section 0); the textbook default alpha = 0.05 gives z* = 1.959964.
 */
import { normalQuantile } from "./distributions.ts";
import { requireOpenUnit } from "./errors.ts";
import type { ForecastRule } from "./forecast-backlog.ts";

/** The textbook default level (two-sided), used as the "current" rule when none is stored. */
export const textbookAlpha = 0.05;

/** z* = Phi^-1(1 - alpha / 2) for a two-sided level alpha. */
export function criticalValueForAlpha(alpha: number): number {
  requireOpenUnit("alpha", alpha);
  return normalQuantile(1 - alpha / 2);
}

/** A rule at a two-sided level alpha. */
export function alphaRule(alpha: number, label = `alpha=${alpha}`): ForecastRule {
  return { label, criticalValue: criticalValueForAlpha(alpha) };
}
