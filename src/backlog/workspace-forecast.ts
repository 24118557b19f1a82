/**
 * Prepares the forecast of a workspace's backlog (statistics.md section 8): its planned and
 * running tests, each with its planned SE, the prior of its metric family (fitted to the
 * workspace's primary results of that family by fitEffectPrior, or the test's own assumed-prior
 * override, or a fallback assumed prior for families without enough history) and the rules.
 * The simulation itself is pure (src/stats/forecast-backlog.ts).
 */
import { and, eq, isNotNull } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments } from "../db/schema.ts";
import { familyObservations } from "../history/family-observations.ts";
import { type AssumedPriorInput, assumedPrior } from "../stats/assumed-prior.ts";
import { bootstrapPrior } from "../stats/bootstrap-prior.ts";
import { normalSurvival } from "../stats/distributions.ts";
import type { EffectPrior } from "../stats/effect-prior.ts";
import { fitEffectPrior } from "../stats/fit-effect-prior.ts";
import type { BacklogForecastInput, ForecastPlannedTest, ForecastRule } from "../stats/forecast-backlog.ts";
import { textbookAlpha } from "../stats/forecast-rule.ts";
import { optimizeDefaults } from "../stats/optimize-defaults.ts";
import type { MetricScale } from "../stats/test-value.ts";
import { criticalValueOfAlpha, type RuleSpec, ruleLabel } from "./forecast-rules.ts";
import { listPlannedTests, type PlannedTestView } from "./planned-tests.ts";

/** Fewer primary results than this in a family and its prior is not fitted. */
export const minimumResultsToFit = 20;

export interface Economics {
  /** Value of one unit of relative lift over the period (V). */
  readonly valuePerLift: number;
  /** Fixed cost of one launch (C). */
  readonly launchCost: number;
  readonly lossPenalty?: number;
  /** Period the defaults are optimised for (default 90 days). */
  readonly periodDays?: number;
}

export interface WorkspaceForecastOptions {
  readonly rules: readonly RuleSpec[];
  readonly simulations?: number;
  readonly seed: number;
  readonly target?: number | null;
  /** The assumed prior for families with too little history (and no per-test override). */
  readonly fallbackPrior?: AssumedPriorInput | null;
  /** Needed by the `recommended` rule. */
  readonly economics?: Economics | null;
  /**
   * `fixed` (default): each fitted prior is taken as known. `bootstrap`: each simulated quarter
   * draws the family's prior from bootstrap refits of the fit (src/stats/bootstrap-prior.ts).
   */
  readonly priorDraws?: PriorDraws;
  /** Bootstrap refits per fitted family with priorDraws `bootstrap` (default 100). */
  readonly bootstrapReplicates?: number;
}

export const priorDrawModes = ["fixed", "bootstrap"] as const;
export type PriorDraws = (typeof priorDrawModes)[number];
export const defaultBootstrapReplicates = 100;

export interface FamilyPriorSource {
  readonly family: string;
  readonly source: "fitted" | "assumed";
  readonly prior: EffectPrior;
  /** Results the prior was fitted to (0 for an assumed prior). */
  readonly observations: number;
  readonly logLik: number | null;
  /** Bootstrap refits the forecast draws the prior from (0: the prior is taken as known). */
  readonly bootstrapReplicates: number;
}

export interface PreparedForecast {
  readonly input: BacklogForecastInput;
  readonly priors: readonly FamilyPriorSource[];
  readonly rules: readonly { readonly label: string; readonly description: string }[];
  readonly assumptions: readonly string[];
}

/** Why a workspace forecast cannot run (the message says what to do). */
export class ForecastSetupError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "ForecastSetupError";
  }
}

export async function prepareWorkspaceForecast(
  db: Database,
  workspaceId: number,
  options: WorkspaceForecastOptions,
): Promise<PreparedForecast> {
  const backlog = await listPlannedTests(db, workspaceId, { statuses: ["planned", "running"] });
  if (backlog.length === 0)
    throw new ForecastSetupError("the workspace has no planned or running tests to forecast");
  const families = [...new Set(backlog.map((test) => test.metricFamily))].sort();
  const priors = new Map<string, FamilyPriorSource>();
  const replicatesByFamily = new Map<string, readonly EffectPrior[]>();
  const priorDraws = options.priorDraws ?? "fixed";
  const replicateCount = options.bootstrapReplicates ?? defaultBootstrapReplicates;
  if (priorDraws === "bootstrap" && (!Number.isInteger(replicateCount) || replicateCount < 2))
    throw new ForecastSetupError(
      `the number of bootstrap refits must be a whole number of at least 2; got ${replicateCount}`,
    );
  const lacking: string[] = [];
  for (const family of families) {
    const needsFamilyPrior = backlog.some(
      (test) => test.metricFamily === family && test.priorOverride === null,
    );
    const observations = await familyObservations(db, workspaceId, family);
    if (observations.length >= minimumResultsToFit) {
      const fit = fitEffectPrior(observations);
      if (priorDraws === "bootstrap")
        replicatesByFamily.set(
          family,
          bootstrapPrior(observations, fit, { replicates: replicateCount, seed: options.seed }).priors,
        );
      priors.set(family, {
        family,
        source: "fitted",
        prior: fit.prior,
        observations: observations.length,
        logLik: fit.logLik,
        bootstrapReplicates: priorDraws === "bootstrap" ? replicateCount : 0,
      });
    } else if (options.fallbackPrior) {
      priors.set(family, {
        family,
        source: "assumed",
        prior: assumedPrior(options.fallbackPrior),
        observations: 0,
        logLik: null,
        bootstrapReplicates: 0,
      });
    } else if (needsFamilyPrior) lacking.push(`${family} (${observations.length} results)`);
  }
  if (lacking.length > 0) {
    throw new ForecastSetupError(
      `too little history to fit a prior for ${lacking.join(", ")}: at least ${minimumResultsToFit} primary results are needed; give an assumed prior (--win-rate, --effect-scale) or a prior override on those planned tests`,
    );
  }
  const overridePriors = new Map<string, EffectPrior>();
  const tests: ForecastPlannedTest[] = backlog.map((test) => {
    if (test.plannedStandardError === null)
      throw new ForecastSetupError(`planned test "${test.key}" has no planned standard error`);
    let prior: EffectPrior;
    let priorReplicates: readonly EffectPrior[] | null = null;
    if (test.priorOverride !== null) {
      const overrideKey = JSON.stringify(test.priorOverride);
      prior = overridePriors.get(overrideKey) ?? assumedPrior(test.priorOverride);
      overridePriors.set(overrideKey, prior);
    } else {
      prior = priors.get(test.metricFamily)!.prior;
      priorReplicates = replicatesByFamily.get(test.metricFamily) ?? null;
    }
    return {
      name: test.key,
      team: test.team ?? "(no team)",
      family: test.metricFamily,
      prior,
      ...(priorReplicates === null ? {} : { priorReplicates }),
      standardError: test.plannedStandardError,
    };
  });

  const currentAlpha = await currentPlannedAlpha(db, workspaceId);
  const rules: ForecastRule[] = [];
  const described: { label: string; description: string }[] = [];
  for (const spec of options.rules) {
    if (spec.kind === "alpha") {
      rules.push({ label: ruleLabel(spec), criticalValue: criticalValueOfAlpha(spec.alpha) });
      described.push({
        label: ruleLabel(spec),
        description: `ship when y > z* s with z* = Phi^-1(1 - ${spec.alpha}/2)`,
      });
    } else if (spec.kind === "current") {
      rules.push({ label: "current", criticalValue: criticalValueOfAlpha(currentAlpha.alpha) });
      described.push({
        label: "current",
        description:
          currentAlpha.source === "history"
            ? `the level the teams plan with: alpha = ${currentAlpha.alpha}, the most common planned alpha in the history`
            : `no planned alpha is recorded in the history: the textbook alpha = ${textbookAlpha} (two-sided)`,
      });
    } else {
      const recommended = recommendedCriticalValues(backlog, tests, priors, options.economics ?? null);
      rules.push({ label: "recommended", criticalValue: recommended.criticalValues });
      described.push({ label: "recommended", description: recommended.description });
    }
  }
  const assumptions = [
    "Planned and running tests are forecast; done tests are left out.",
    "Each planned test's SE follows statistics.md section 7: n per arm (or traffic x days / arms), sqrt(2 (1-p) / (n p)) on a baseline rate, (sd/m) sqrt(2/n) on a mean, or the SE stated.",
    ...[...priors.values()].map((source) =>
      source.source === "fitted"
        ? `Family ${source.family}: prior fitted (${source.prior.family}) to ${source.observations} primary results of the history (A/A tests and sample-ratio-mismatch flags left out)${source.bootstrapReplicates > 0 ? `; each simulated quarter draws it from ${source.bootstrapReplicates} bootstrap refits (resampled results, seed ${options.seed})` : ""}.`
        : `Family ${source.family}: too little history, the assumed prior given is used.`,
    ),
    ...(overridePriors.size > 0
      ? ["Planned tests with a prior override use that assumed prior instead of their family's."]
      : []),
    ...described.map((rule) => `Rule ${rule.label}: ${rule.description}.`),
  ];
  return {
    input: {
      tests,
      rules,
      seed: options.seed,
      ...(options.simulations === undefined ? {} : { simulations: options.simulations }),
      target: options.target ?? null,
    },
    priors: [...priors.values()],
    rules: described,
    assumptions,
  };
}

async function currentPlannedAlpha(
  db: Database,
  workspaceId: number,
): Promise<{ alpha: number; source: "history" | "textbook" }> {
  const rows = await db
    .select({ alpha: experiments.plannedAlpha })
    .from(experiments)
    .where(
      and(
        eq(experiments.workspaceId, workspaceId),
        isNotNull(experiments.plannedAlpha),
        eq(experiments.isAa, false),
      ),
    );
  const counts = new Map<number, number>();
  for (const { alpha } of rows)
    if (alpha !== null && alpha > 0 && alpha < 1) counts.set(alpha, (counts.get(alpha) ?? 0) + 1);
  if (counts.size === 0) return { alpha: textbookAlpha, source: "textbook" };
  // Most common; ties go to the smaller (stricter) level.
  const [alpha] = [...counts.entries()].sort((a, b) => b[1] - a[1] || a[0] - b[0])[0]!;
  return { alpha, source: "history" };
}

/**
 * The defaults optimiser's threshold for each family, applied to that family's planned tests
 * (their planned sizes are kept: the forecast is of the plan as it stands).
 */
function recommendedCriticalValues(
  backlog: readonly PlannedTestView[],
  tests: readonly ForecastPlannedTest[],
  familyPriors: ReadonlyMap<string, FamilyPriorSource>,
  economics: Economics | null,
): { criticalValues: number[]; description: string } {
  if (!economics)
    throw new ForecastSetupError(
      "the recommended rule needs the program's economics: the value of a unit of lift and the cost of a launch (--value-per-lift, --launch-cost)",
    );
  const byFamily = new Map<string, number>();
  const parts: string[] = [];
  for (const family of [...new Set(backlog.map((test) => test.metricFamily))].sort()) {
    const members = backlog.filter((test) => test.metricFamily === family);
    const scaled = members.find(
      (test) => test.baselineRate !== null || (test.baselineMean !== null && test.baselineSd !== null),
    );
    if (!scaled)
      throw new ForecastSetupError(
        `the recommended rule needs a baseline (rate, or mean and sd) on at least one planned test of family ${family}`,
      );
    const metric: MetricScale =
      scaled.baselineRate !== null
        ? { kind: "rate", baselineRate: scaled.baselineRate }
        : { kind: "mean", mean: scaled.baselineMean!, sd: scaled.baselineSd! };
    const traffic = members.flatMap((test) =>
      test.dailyTraffic !== null
        ? [test.dailyTraffic]
        : test.nPerArm !== null && test.runDays !== null
          ? [(test.nPerArm * test.arms) / test.runDays]
          : [],
    );
    if (traffic.length === 0)
      throw new ForecastSetupError(
        `the recommended rule needs the daily traffic (or n per arm and run days) of a planned test of family ${family}`,
      );
    const index = backlog.indexOf(members[0]!);
    const optimum = optimizeDefaults({
      prior: familyPriors.get(family)?.prior ?? tests[index]!.prior,
      metric,
      dailyTraffic: traffic.reduce((sum, value) => sum + value, 0) / traffic.length,
      periodDays: economics.periodDays ?? 90,
      backlog: members.length,
      arms: 2,
      valuePerLift: economics.valuePerLift,
      launchCost: economics.launchCost,
      lossPenalty: economics.lossPenalty ?? 0,
    });
    byFamily.set(family, optimum.threshold);
    parts.push(
      `${family} z* = ${optimum.threshold.toFixed(3)} (alpha ${(2 * normalSurvival(optimum.threshold)).toFixed(3)})`,
    );
  }
  return {
    criticalValues: backlog.map((test) => byFamily.get(test.metricFamily)!),
    description: `the threshold the defaults optimiser recommends per family for value ${economics.valuePerLift.toLocaleString("en-US")} per unit of lift and launch cost ${economics.launchCost.toLocaleString("en-US")} (${parts.join(", ")}); planned sizes are kept`,
  };
}
