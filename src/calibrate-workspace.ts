/**
 * Prepares a calibration of the company's defaults (statistics.md section 7) from a request:
 * the prior (fitted by fitEffectPrior to the workspace's primary results of one metric family,
 * A/A tests and SRM-flagged results left out; or assumed from a win rate and an effect scale),
 * the company's current design (medians of its experiments' planned alpha and n, when known),
 * and the program's economics. Shared by `plumbline calibrate` and POST /api/v1/calibrate; the
 * statistics themselves are pure (src/stats/calibrate-defaults.ts).
 */
import { and, eq } from "drizzle-orm";
import type { Database } from "./db/client.ts";
import { experiments, metrics, results } from "./db/schema.ts";
import { familyObservations } from "./history/family-observations.ts";
import { type AssumedPriorInput, assumedPrior, type PriorShape } from "./stats/assumed-prior.ts";
import { type CalibrationReport, type CurrentDesign, calibrateDefaults } from "./stats/calibrate-defaults.ts";
import { type PriorVariant, transformPrior } from "./stats/defaults-sensitivity.ts";
import type { EffectPrior } from "./stats/effect-prior.ts";
import { type FitFamily, fitEffectPrior } from "./stats/fit-effect-prior.ts";
import { type MetricScale, textbookSampleSize } from "./stats/test-value.ts";

/** Fewer primary results than this in a family and its prior is not fitted. */
export const minimumResultsForCalibration = 20;

export type CalibrationPriorRequest =
  | {
      readonly source: "assumed";
      readonly winRate: number;
      readonly lossRate?: number;
      readonly effectScale: number;
      readonly shape?: PriorShape;
    }
  | { readonly source: "workspace"; readonly family: string; readonly fitFamily?: FitFamily | "auto" };

export interface CalibrationRequest {
  readonly prior: CalibrationPriorRequest;
  readonly metric: MetricScale;
  readonly dailyTraffic: number;
  readonly periodDays: number;
  readonly backlog: number;
  readonly valuePerLift: number;
  readonly launchCost: number;
  readonly lossPenalty?: number;
  readonly arms?: number;
  readonly mde?: number;
  readonly maxDays?: number;
}

export interface PriorSummary {
  readonly source: "fitted" | "assumed";
  readonly family: string;
  readonly metricFamily: string | null;
  readonly observations: number;
  readonly logLik: number | null;
  readonly components: EffectPrior["components"];
}

export type WorkspaceCalibration = CalibrationReport & { readonly prior: PriorSummary };

/** Why a calibration cannot run (the message says what to do). */
export class CalibrationSetupError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "CalibrationSetupError";
  }
}

/** Medians of the planned alpha, power, MDE and n per arm of the workspace's experiments (A/A left out). */
export interface PlannedHistory {
  readonly alpha: number | null;
  readonly power: number | null;
  readonly mde: number | null;
  /** planned_sample_size read as the total over arms, divided by the arms of the planned split (2 if unknown). */
  readonly nPerArm: number | null;
  readonly experiments: number;
}

function median(values: readonly number[]): number | null {
  if (values.length === 0) return null;
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[middle]! : (sorted[middle - 1]! + sorted[middle]!) / 2;
}

export async function plannedHistory(
  db: Database,
  workspaceId: number,
  family: string | null,
): Promise<PlannedHistory> {
  const rows = await db
    .selectDistinct({
      id: experiments.id,
      alpha: experiments.plannedAlpha,
      power: experiments.plannedPower,
      mde: experiments.plannedMde,
      sampleSize: experiments.plannedSampleSize,
      split: experiments.plannedSplit,
    })
    .from(experiments)
    .innerJoin(results, eq(results.experimentId, experiments.id))
    .innerJoin(metrics, eq(results.metricId, metrics.id))
    .where(
      and(
        eq(experiments.workspaceId, workspaceId),
        eq(experiments.isAa, false),
        eq(results.isPrimary, true),
        ...(family === null ? [] : [eq(metrics.family, family)]),
      ),
    );
  const finite = (value: number | null, check: (v: number) => boolean) =>
    value !== null && Number.isFinite(value) && check(value);
  return {
    alpha: median(rows.flatMap((row) => (finite(row.alpha, (v) => v > 0 && v < 1) ? [row.alpha!] : []))),
    power: median(rows.flatMap((row) => (finite(row.power, (v) => v > 0 && v < 1) ? [row.power!] : []))),
    mde: median(rows.flatMap((row) => (finite(row.mde, (v) => v > 0) ? [row.mde!] : []))),
    nPerArm: median(
      rows.flatMap((row) =>
        finite(row.sampleSize, (v) => v > 0)
          ? [row.sampleSize! / (Array.isArray(row.split) && row.split.length >= 2 ? row.split.length : 2)]
          : [],
      ),
    ),
    experiments: rows.length,
  };
}

/** The current design from the history, when its alpha and either its n or its power and MDE are known. */
export function currentDesignFromHistory(
  history: PlannedHistory,
  metric: MetricScale,
): CurrentDesign | undefined {
  if (history.alpha === null) return undefined;
  if (history.nPerArm !== null) {
    return {
      alpha: history.alpha,
      nPerArm: history.nPerArm,
      source: `medians over ${history.experiments} experiments of the workspace: planned alpha ${history.alpha}, n per arm ${history.nPerArm} (planned sample size read as the total over the arms)`,
    };
  }
  if (history.power !== null && history.mde !== null) {
    return {
      alpha: history.alpha,
      nPerArm: textbookSampleSize(metric, history.alpha, history.power, history.mde),
      source: `medians over ${history.experiments} experiments of the workspace: planned alpha ${history.alpha}, power ${history.power} at MDE ${history.mde} (n per arm from the normal-approximation formula)`,
    };
  }
  return undefined;
}

function assumedVariant(input: AssumedPriorInput, variant: PriorVariant): EffectPrior {
  const lossRate = input.lossRate;
  let winRate = input.winRate * variant.winRateFactor;
  // Keep the null share non-negative: cap the win rate (and the loss rate that follows it).
  const limit = lossRate === undefined ? 0.5 : 1 - lossRate;
  winRate = Math.min(winRate, limit);
  return assumedPrior({
    ...input,
    winRate,
    ...(lossRate === undefined ? {} : { lossRate }),
    effectScale: input.effectScale * variant.effectScaleFactor,
  });
}

/** Runs the calibration; `workspaceId` is needed for a fitted prior and for the current design. */
export async function calibrateWorkspace(
  db: Database | null,
  workspaceId: number | null,
  request: CalibrationRequest,
): Promise<WorkspaceCalibration> {
  let prior: EffectPrior;
  let priorFor: (variant: PriorVariant) => EffectPrior;
  let summary: Omit<PriorSummary, "components">;
  let priorDescription: string;
  if (request.prior.source === "assumed") {
    const input: AssumedPriorInput = {
      winRate: request.prior.winRate,
      effectScale: request.prior.effectScale,
      ...(request.prior.lossRate === undefined ? {} : { lossRate: request.prior.lossRate }),
      ...(request.prior.shape === undefined ? {} : { shape: request.prior.shape }),
    };
    prior = assumedPrior(input);
    priorFor = (variant) => assumedVariant(input, variant);
    summary = { source: "assumed", family: "assumed", metricFamily: null, observations: 0, logLik: null };
    const shape = input.shape ?? "normal";
    priorDescription =
      `assumed: win rate ${input.winRate}, loss rate ${input.lossRate ?? input.winRate}, ` +
      `sizes ${shape === "normal" ? "half-normal" : "half-t (3 df)"} with scale ${input.effectScale} (statistics.md section 7)`;
  } else {
    if (db === null || workspaceId === null) {
      throw new CalibrationSetupError("a fitted prior needs a workspace (--workspace NAME)");
    }
    const observations = await familyObservations(db, workspaceId, request.prior.family);
    if (observations.length < minimumResultsForCalibration) {
      throw new CalibrationSetupError(
        `metric family "${request.prior.family}" has ${observations.length} usable primary results; at least ${minimumResultsForCalibration} are needed to fit its prior (or assume one with --win-rate and --effect-scale)`,
      );
    }
    const fit = fitEffectPrior(observations, { family: request.prior.fitFamily ?? "auto" });
    prior = fit.prior;
    const fitted = fit.prior;
    priorFor = (variant) => transformPrior(fitted, variant);
    summary = {
      source: "fitted",
      family: fit.family,
      metricFamily: request.prior.family,
      observations: observations.length,
      logLik: fit.logLik,
    };
    priorDescription =
      `fitted (${fit.family} family, ${fit.prior.components.length} components, log-likelihood ${fit.logLik.toFixed(2)}) ` +
      `to ${observations.length} primary results of metric family "${request.prior.family}", A/A tests and SRM-flagged results left out; ` +
      `sensitivity scales its share of real effects (wins and losses together) and its effect sizes`;
  }
  let current: CurrentDesign | undefined;
  if (db !== null && workspaceId !== null) {
    const family = request.prior.source === "workspace" ? request.prior.family : null;
    current = currentDesignFromHistory(await plannedHistory(db, workspaceId, family), request.metric);
  }
  const report = calibrateDefaults({
    program: {
      prior,
      metric: request.metric,
      dailyTraffic: request.dailyTraffic,
      periodDays: request.periodDays,
      backlog: request.backlog,
      arms: request.arms ?? 2,
      valuePerLift: request.valuePerLift,
      launchCost: request.launchCost,
      lossPenalty: request.lossPenalty ?? 0,
    },
    priorFor,
    priorDescription,
    ...(request.mde === undefined ? {} : { mde: request.mde }),
    ...(request.maxDays === undefined ? {} : { maxDays: request.maxDays }),
    ...(current === undefined ? {} : { current }),
  });
  return { ...report, prior: { ...summary, components: prior.components } };
}
