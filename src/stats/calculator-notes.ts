/**
 * The assumptions and cautions that travel with every design-calculator result (CLI and API),
 * so that no estimate reaches a user without them.
 */
import type { ErrorRatesInput } from "./error-rates.ts";
import type { PlanBasis } from "./sample-size-plan.ts";

export const calculatorCautions: readonly string[] = [
  "This calculation does not replace a statistician's review of the design.",
  "It is not for clinical or safety-critical decisions.",
];

export function riskAssumptions(input: ErrorRatesInput): readonly string[] {
  return [
    `The win rate ${input.winRate} is the prior share of tested ideas that are real wins; the figures are only as good as that guess.`,
    `A win ships on the upper tail of a two-sided test at alpha ${input.alpha}, so a null test ships with probability alpha/2 (false positive risk); errorGivenRejection counts rejections in either direction at the full alpha.`,
    `Every real win is assumed to be detected with the same power ${input.power}; real effects smaller than the design's target are detected less often, which raises the false positive risk.`,
    "Tests are treated as independent; the confusion matrix holds expected counts, not a forecast of exact counts.",
  ];
}

export function designAssumptions(input: {
  readonly alpha: number;
  readonly df?: number | undefined;
}): readonly string[] {
  return [
    "The true effect is taken as known and fixed; power, Type S and exaggeration describe what happens to estimates of that effect (Gelman & Carlin 2014).",
    input.df === undefined
      ? "The estimate is normal around the true effect with the given standard error."
      : `The standardized estimate follows a Student t distribution with ${input.df} degrees of freedom around the true effect.`,
    `Significance is two-sided at alpha ${input.alpha}; the exaggeration ratio is E(|estimate| / |effect|) among significant results, in closed form (Lu, Qiu & Deng 2018).`,
  ];
}

export function sizeAssumptions(plan: PlanBasis): readonly string[] {
  const notes = [
    plan.metricKind === "proportion"
      ? "Conversion metric: two proportions compared by the normal approximation (R power.prop.test formula); units are independent."
      : "Continuous metric: two-sample t-test with a common standard deviation, exact noncentral t (R power.t.test); units are independent.",
    plan.convention === "strict"
      ? "Power counts rejections in both tails (R strict = TRUE)."
      : "Power counts rejections in the direction of the effect only (R's default, strict = FALSE).",
    `The level is two-sided alpha ${plan.alpha}${plan.comparisons > 1 ? (plan.correction === "bonferroni" ? `, split by Bonferroni over ${plan.comparisons} comparisons with the control (${plan.alphaPerComparison} each)` : `, not corrected for the ${plan.comparisons} comparisons with the control`) : ""}.`,
  ];
  if (plan.ratio !== 1)
    notes.push(`Each treatment arm gets ${plan.ratio} times the units of the control arm.`);
  if (plan.varianceFactor !== 1) {
    notes.push(
      `Variance reduced by the factor ${plan.varianceFactor} = 1 - rho^2 from a pre-period covariate (Deng, Xu, Kohavi & Walker 2013); this holds only if the covariate adjustment is used in the analysis.`,
    );
  }
  notes.push(
    "Run length assumes every eligible unit per day enters the test and the traffic is steady; days are rounded up.",
  );
  return notes;
}
