/**
 * How the recommended defaults move when the prior is wrong: the win rate halved or doubled,
 * the effect scale halved or doubled (statistics.md section 7: "always show the sensitivity of
 * the recommendation to the assumed win rate and effect scale").
 *
 * For each scenario the optimum is recomputed, and the base recommendation is valued under the
 * scenario's prior. plumbline's fragility rule: the recommendation is **fragile** when, in any
 * scenario whose optimum creates value, keeping the base recommendation forgoes more than 10 %
 * of that scenario's optimal value.
 */
import type { EffectPrior, PriorComponent } from "./effect-prior.ts";
import { isNullComponent } from "./effect-prior.ts";
import { type OptimizeOptions, optimizeDefaults } from "./optimize-defaults.ts";
import { alphaFromThreshold, type ProgramEconomics, runDays, valuePerPeriod } from "./test-value.ts";

/** A change of the prior: factors on the win rate and on the effect scale. */
export interface PriorVariant {
  readonly winRateFactor: number;
  readonly effectScaleFactor: number;
}

export type SensitivityLabel =
  | "winRateHalved"
  | "winRateDoubled"
  | "effectScaleHalved"
  | "effectScaleDoubled";

export const sensitivityVariants: readonly {
  readonly label: SensitivityLabel;
  readonly variant: PriorVariant;
}[] = [
  { label: "winRateHalved", variant: { winRateFactor: 0.5, effectScaleFactor: 1 } },
  { label: "winRateDoubled", variant: { winRateFactor: 2, effectScaleFactor: 1 } },
  { label: "effectScaleHalved", variant: { winRateFactor: 1, effectScaleFactor: 0.5 } },
  { label: "effectScaleDoubled", variant: { winRateFactor: 1, effectScaleFactor: 2 } },
];

/** Share of the scenario's optimal value the base recommendation may forgo before it is fragile. */
export const fragileValueLoss = 0.1;

export const fragileRule =
  "fragile when, under any scenario (win rate halved or doubled, effect scale halved or doubled) whose optimum " +
  "creates value, keeping the base recommendation forgoes more than 10 % of that scenario's optimal value";

export interface SensitivityScenario {
  readonly label: SensitivityLabel;
  readonly winRateFactor: number;
  readonly effectScaleFactor: number;
  /** The scenario's own optimum. */
  readonly recommended: {
    readonly alpha: number;
    readonly threshold: number;
    readonly nPerArm: number;
    readonly days: number;
    readonly expectedValue: number;
  };
  /** Value of the base recommendation if this scenario is the truth. */
  readonly baseRecommendationValue: number;
  /** (scenario optimum - base value) / scenario optimum; NaN when the optimum creates no value. */
  readonly shareOfValueForgone: number;
}

export interface DefaultsSensitivity {
  readonly scenarios: readonly SensitivityScenario[];
  readonly fragile: boolean;
  readonly fragileRule: string;
}

/**
 * Sensitivity of a recommendation (threshold, nPerArm) for a program. `priorFor` builds the prior
 * of a scenario (an assumed prior rebuilds from its inputs; a fitted one uses `transformPrior`).
 */
export function defaultsSensitivity(
  program: ProgramEconomics,
  base: { readonly threshold: number; readonly nPerArm: number },
  priorFor: (variant: PriorVariant) => EffectPrior,
  options: OptimizeOptions = {},
): DefaultsSensitivity {
  const scenarios = sensitivityVariants.map(({ label, variant }): SensitivityScenario => {
    const scenarioProgram = { ...program, prior: priorFor(variant) };
    const optimum = optimizeDefaults(scenarioProgram, options);
    const baseRecommendationValue = valuePerPeriod(scenarioProgram, base.threshold, base.nPerArm);
    return {
      label,
      winRateFactor: variant.winRateFactor,
      effectScaleFactor: variant.effectScaleFactor,
      recommended: {
        alpha: alphaFromThreshold(optimum.threshold),
        threshold: optimum.threshold,
        nPerArm: optimum.nPerArm,
        days: runDays(program, optimum.nPerArm),
        expectedValue: optimum.expectedValue,
      },
      baseRecommendationValue,
      shareOfValueForgone:
        optimum.expectedValue > 0
          ? (optimum.expectedValue - baseRecommendationValue) / optimum.expectedValue
          : Number.NaN,
    };
  });
  const fragile = scenarios.some((scenario) => scenario.shareOfValueForgone > fragileValueLoss);
  return { scenarios, fragile, fragileRule };
}

/**
 * A fitted prior's scenario: every non-null weight times winRateFactor (the null takes the rest;
 * capped so that the null share stays >= 0), every effect size times effectScaleFactor. A fitted
 * mixture does not separate wins from losses (a zero-mean normal holds both), so the "win rate"
 * of a fitted prior is its share of real effects, wins and losses together.
 */
export function transformPrior(prior: EffectPrior, variant: PriorVariant): EffectPrior {
  let nonNull = 0;
  for (const { component, weight } of prior.components) if (!isNullComponent(component)) nonNull += weight;
  const factor = nonNull > 0 ? Math.min(variant.winRateFactor, 1 / nonNull) : 1;
  const hasNull = prior.components.some(({ component }) => isNullComponent(component));
  const components = prior.components.map(({ component, weight }) =>
    isNullComponent(component)
      ? { component, weight: 1 - factor * nonNull }
      : { component: scaleComponent(component, variant.effectScaleFactor), weight: weight * factor },
  );
  if (!hasNull && factor !== 1)
    components.push({ component: { kind: "point", at: 0 }, weight: 1 - factor * nonNull });
  return { family: prior.family, components: components.filter((entry) => entry.weight > 0) };
}

function scaleComponent(component: PriorComponent, factor: number): PriorComponent {
  switch (component.kind) {
    case "point":
      return { ...component, at: component.at * factor };
    case "normal":
      return { ...component, mean: component.mean * factor, scale: component.scale * factor };
    case "uniform":
      return { ...component, lower: component.lower * factor, upper: component.upper * factor };
    case "halfNormal":
    case "halfT":
      return { ...component, scale: component.scale * factor };
    case "truncatedNormal":
      return {
        ...component,
        mean: component.mean * factor,
        scale: component.scale * factor,
        lower: component.lower * factor,
        upper: component.upper * factor,
      };
  }
}
