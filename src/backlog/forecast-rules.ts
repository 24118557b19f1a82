/**
 * The decision rules a forecast can use, as a person names them: `current` (the level the
 * workspace's teams plan with: the most common planned alpha of its history, else the textbook
 * 0.05), `recommended` (the threshold the defaults optimiser recommends for each metric family,
 * src/stats/optimize-defaults.ts) and `alpha=A` (z* = Phi^-1(1 - A/2)).
 */
import { criticalValueForAlpha } from "../stats/forecast-rule.ts";

export type RuleSpec =
  | { readonly kind: "current" }
  | { readonly kind: "recommended" }
  | { readonly kind: "alpha"; readonly alpha: number };

/** Parses `current`, `recommended` or `alpha=A`; returns a message for anything else. */
export function parseRuleSpec(text: string): RuleSpec | { error: string } {
  const trimmed = text.trim().toLowerCase();
  if (trimmed === "current") return { kind: "current" };
  if (trimmed === "recommended") return { kind: "recommended" };
  const match = /^alpha=(.+)$/.exec(trimmed);
  if (match) {
    const alpha = Number(match[1]);
    if (Number.isFinite(alpha) && alpha > 0 && alpha < 1) return { kind: "alpha", alpha };
    return { error: `the level in "${text}" must be a number strictly between 0 and 1 (e.g. alpha=0.05)` };
  }
  return { error: `"${text}" is not a rule: use current, recommended or alpha=A (e.g. alpha=0.1)` };
}

export function ruleLabel(spec: RuleSpec): string {
  return spec.kind === "alpha" ? `alpha=${spec.alpha}` : spec.kind;
}

/** z* of a rule with a single level. */
export function criticalValueOfAlpha(alpha: number): number {
  return criticalValueForAlpha(alpha);
}
