/**
 * The forecast as one JSON document (CLI --json, API): the headline rule's outcomes at the top
 * (seed, sims, shipped, realWins, falseWins, claimedLift, realizedLift, liftGap,
 * probabilityToReachTarget, byTeam, byFamily), every rule and the differences between rules
 * below, with the priors used, the definitions, assumptions and cautions.
 */
import type { BacklogForecast } from "../stats/forecast-backlog.ts";
import type { FamilyPriorSource } from "./workspace-forecast.ts";

export const forecastDefinitions = {
  shipped: "planned tests whose estimate clears the rule's threshold (y > z* s)",
  realWins: "shipped tests whose true effect is above 0",
  falseWins: "shipped tests whose true effect is 0 or below (nulls and losses)",
  claimedLift: "sum of the shipped tests' estimated relative lifts",
  realizedLift: "sum of the shipped tests' true relative lifts",
  liftGap: "claimed minus realized lift",
  probabilityToReachTarget: "share of simulated quarters whose realized lift reaches the target",
} as const;

export interface ForecastReportContext {
  readonly workspace?: string | null;
  readonly priors?: readonly FamilyPriorSource[];
  readonly rules?: readonly { readonly label: string; readonly description: string }[];
  readonly assumptions?: readonly string[];
}

export function forecastReport(forecast: BacklogForecast, context: ForecastReportContext = {}) {
  const headline = forecast.rules[0]!;
  return {
    ...(context.workspace ? { workspace: context.workspace } : {}),
    seed: forecast.seed,
    sims: forecast.simulations,
    target: forecast.target,
    rule: headline.label,
    plannedTests: headline.tests.length,
    shipped: headline.shipped,
    realWins: headline.realWins,
    falseWins: headline.falseWins,
    claimedLift: headline.claimedLift,
    realizedLift: headline.realizedLift,
    liftGap: headline.liftGap,
    probabilityToReachTarget: headline.probabilityToReachTarget,
    byTeam: headline.byTeam,
    byFamily: headline.byFamily,
    rules: forecast.rules.map((rule) => ({
      ...rule,
      description: context.rules?.find((described) => described.label === rule.label)?.description ?? null,
    })),
    comparison: forecast.differences,
    priors: context.priors ?? [],
    definitions: forecastDefinitions,
    assumptions: [...(context.assumptions ?? []), ...forecast.assumptions],
    cautions: forecast.cautions,
  };
}

export type ForecastReport = ReturnType<typeof forecastReport>;
