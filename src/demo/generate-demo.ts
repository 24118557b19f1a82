/**
 * The demo workspace's history, simulated from a known truth: about three years of an invented
 * bicycle-parts shop's A/B tests, written in the canonical CSV layouts, with the truth beside it
 * so that later features (the review, the prior fit, the defaults) can be checked against it.
 * Pure: the same options give the same files; randomness comes only from createRandom(seed).
 *
 * The model (docs/demo.md has every parameter):
 * 1. Each experiment draws a team, a primary metric family, a baseline rate, daily traffic and a
 *    run length; its planned sample follows, and its planned MDE is the effect it has 80 % power for.
 * 2. Its true effect is 0 for an A/A test, else a draw from the family's prior (point mass at 0,
 *    half-normal wins, half-normal losses, losses more common).
 * 3. Units are split 50/50 (Binomial); converters and spend are simulated per arm.
 *    Peeking tests are analysed at each look and stop when significant; tests with an injected
 *    sample ratio mismatch lose units of one arm before analysis.
 * 4. The result is written in the team's input form, (y, s) derived from the written text, and the
 *    textbook rule decides: ship when y / s > z_{1 - alpha/2}.
 * 5. Some shipped tests get a holdout measurement: true effect + noise of a stated SE.
 */

import { resultsColumns as historyColumns, realizedColumns } from "../import/layouts.ts";
import { normalQuantile } from "../stats/distributions.ts";
import { createPriorSampler, type PriorSampler } from "../stats/prior-sampling.ts";
import { createRandom, type RandomSource } from "../stats/random.ts";
import { sampleRatioMismatch, sampleRatioMismatchThreshold } from "../stats/sample-ratio-mismatch.ts";
import { countDemo, type DemoCounts } from "./demo-counts.ts";
import { formatCsv } from "./demo-csv.ts";
import {
  type DemoFamily,
  type DemoParameters,
  type DemoRange,
  type DemoTeamParameters,
  defaultDemoParameters,
  demoFamilies,
} from "./demo-parameters.ts";
import {
  type ArmData,
  type DemoInputForm,
  type ReportedResult,
  type ReportStyle,
  readWrittenNumber,
  reportResult,
} from "./reported-lift.ts";
import {
  type ArmTotals,
  addArmBatch,
  binomialApproximate,
  emptyArmTotals,
  spendMoments,
} from "./simulate-arm.ts";

export interface DemoOptions {
  readonly seed?: number;
  readonly experiments?: number;
  readonly aaShare?: number;
  readonly sampleRatioMismatchTests?: number;
  readonly holdouts?: number;
  readonly peekingShare?: number;
  /** A complete parameter set to start from (the options above override it). */
  readonly parameters?: DemoParameters;
}

export type DemoDecision = "shipped" | "not_shipped" | "iterate" | "pending";

/** The known truth of one CSV row (one experiment x metric). */
export interface DemoResultTruth {
  readonly key: string;
  readonly name: string;
  readonly team: string;
  readonly metric: string;
  readonly family: DemoFamily;
  readonly isPrimary: boolean;
  readonly isAa: boolean;
  /**
   * The true relative lift of this metric (treatment / control - 1 in expectation, without any
   * sample ratio mismatch). All demo metrics increase, so the stored lift estimates it directly.
   */
  readonly trueEffect: number;
  /** Which part of the prior the experiment's primary effect came from ("aa" for A/A tests). */
  readonly effectClass: "null" | "win" | "loss" | "aa";
  /** What the row's lift estimates: trueEffect, distorted by the units lost in a mismatch. */
  readonly expectedObservedLift: number;
  /** (y, s) as statistics.md section 1 derives them from the row as written. */
  readonly observedLift: number;
  readonly observedSe: number;
  readonly inputForm: DemoInputForm;
  readonly percent: boolean;
  readonly controlN: number;
  readonly treatmentN: number;
  readonly plannedNPerArm: number;
  readonly plannedMde: number;
  readonly sampleRatioMismatchInjected: boolean;
  readonly lostShare: number;
  readonly srmPValue: number;
  readonly srmFlagged: boolean;
  readonly peeked: boolean;
  readonly stoppedEarly: boolean;
  /** Share of the planned sample analysed (1 unless stopped early). */
  readonly sampleFraction: number;
  readonly decision: DemoDecision;
  readonly startedOn: string;
  readonly endedOn: string;
  /** The holdout of a shipped test's primary metric (null for all other rows). */
  readonly holdout: {
    readonly realizedLift: number;
    readonly realizedSe: number;
    readonly measuredOn: string;
  } | null;
}

export interface DemoTruth {
  readonly parameters: DemoParameters;
  readonly experiments: readonly DemoResultTruth[];
  readonly counts: DemoCounts;
}

export interface DemoData {
  readonly historyCsv: string;
  readonly realizedCsv: string;
  readonly truth: DemoTruth;
}

/** The demo writes the importer's own canonical layouts, so the two cannot drift apart. */
export { realizedColumns, resultsColumns as historyColumns } from "../import/layouts.ts";

const millisecondsPerDay = 86400000;

function dayNumber(isoDate: string): number {
  return Math.round(Date.parse(`${isoDate}T00:00:00Z`) / millisecondsPerDay);
}

function isoDate(day: number): string {
  return new Date(day * millisecondsPerDay).toISOString().slice(0, 10);
}

function uniformIn(random: RandomSource, range: DemoRange): number {
  return range.low + (range.high - range.low) * random.uniform();
}

function logUniformIn(random: RandomSource, range: DemoRange): number {
  return Math.exp(uniformIn(random, { low: Math.log(range.low), high: Math.log(range.high) }));
}

function pickWeighted<Item>(random: RandomSource, items: readonly (readonly [Item, number])[]): Item {
  const total = items.reduce((sum, [, weight]) => sum + weight, 0);
  let u = random.uniform() * total;
  for (const [item, weight] of items) {
    u -= weight;
    if (u < 0) return item;
  }
  return items[items.length - 1]![0];
}

/** Draws k distinct indices of `pool` (partial Fisher-Yates). */
function sampleWithoutReplacement<Item>(random: RandomSource, pool: readonly Item[], k: number): Item[] {
  const copy = [...pool];
  const count = Math.min(k, copy.length);
  for (let index = 0; index < count; index++) {
    const other = index + random.integer(copy.length - index);
    [copy[index], copy[other]] = [copy[other]!, copy[index]!];
  }
  return copy.slice(0, count);
}

interface PlannedExperiment {
  readonly index: number;
  readonly team: DemoTeamParameters;
  readonly family: DemoFamily;
  readonly isAa: boolean;
  readonly baselineRate: number;
  readonly runDays: number;
  readonly plannedNPerArm: number;
  readonly trueEffect: number;
  readonly secondary: DemoFamily | null;
  readonly peeked: boolean;
  readonly style: ReportStyle;
  readonly percent: boolean;
  readonly level: number;
  readonly startDay: number;
  readonly idea: string;
  readonly iterateDraw: number;
  readonly holdoutDelayDays: number;
  readonly holdoutSeFactor: number;
  readonly holdoutNoise: number;
  readonly realizedPercent: boolean;
}

interface SimulatedExperiment {
  readonly plan: PlannedExperiment;
  readonly reports: readonly { family: DemoFamily; trueEffect: number; reported: ReportedResult }[];
  readonly controlN: number;
  readonly treatmentN: number;
  readonly srmInjected: boolean;
  readonly lostArm: "control" | "treatment" | null;
  readonly lostShare: number;
  readonly srmPValue: number;
  readonly stoppedEarly: boolean;
  readonly sampleFraction: number;
  readonly endDay: number;
  readonly decision: DemoDecision;
}

export function resolveDemoParameters(options: DemoOptions = {}): DemoParameters {
  const base = options.parameters ?? defaultDemoParameters;
  return {
    ...base,
    seed: options.seed ?? base.seed,
    experiments: options.experiments ?? base.experiments,
    aaShare: options.aaShare ?? base.aaShare,
    sampleRatioMismatch: {
      ...base.sampleRatioMismatch,
      tests: options.sampleRatioMismatchTests ?? base.sampleRatioMismatch.tests,
    },
    holdouts: { ...base.holdouts, count: options.holdouts ?? base.holdouts.count },
    peeking: { ...base.peeking, share: options.peekingShare ?? base.peeking.share },
  };
}

/** The planned MDE: the relative lift the planned sample detects with the planned power. */
export function plannedMinimumDetectableEffect(
  parameters: DemoParameters,
  family: DemoFamily,
  baselineRate: number,
  nPerArm: number,
): number {
  const zSum = normalQuantile(1 - parameters.alpha / 2) + normalQuantile(parameters.power);
  // statistics.md section 7 conventions: s = sqrt(2 (1-p) / (n p)) on a rate, (sd/m) sqrt(2/n) on a mean.
  if (family === "revenue") {
    const coefficientOfVariation = Math.sqrt(Math.exp(parameters.spend.logSd ** 2) / baselineRate - 1);
    return zSum * coefficientOfVariation * Math.sqrt(2 / nPerArm);
  }
  return zSum * Math.sqrt((2 * (1 - baselineRate)) / (nPerArm * baselineRate));
}

function planExperiments(parameters: DemoParameters, random: RandomSource): PlannedExperiment[] {
  const samplers = Object.fromEntries(
    demoFamilies.map((family) => [family, createPriorSampler(parameters.metrics[family].prior)]),
  ) as Record<DemoFamily, PriorSampler>;
  const firstDay = dayNumber(parameters.firstDay);
  const lastDay = dayNumber(parameters.lastDay);
  const reporting = parameters.reporting;
  const styles: (readonly [ReportStyle, number])[] = [
    ["raw", reporting.raw],
    ["interval", reporting.interval],
    ["p_value", reporting.pValue],
    ["standard_error", reporting.standardError],
  ];
  const plans: PlannedExperiment[] = [];
  for (let index = 0; index < parameters.experiments; index++) {
    const team = pickWeighted(
      random,
      parameters.teams.map((candidate) => [candidate, candidate.share] as const),
    );
    const isAa = random.uniform() < parameters.aaShare;
    const family = pickWeighted(
      random,
      demoFamilies.map((candidate) => [candidate, team.primaryFamilies[candidate] ?? 0] as const),
    );
    const metric = parameters.metrics[family];
    const baselineRate = uniformIn(random, metric.baselineRate);
    const dailyUnits = logUniformIn(random, metric.dailyUnits);
    const runDays = metric.runDays[random.integer(metric.runDays.length)]!;
    let trueEffect = 0;
    if (!isAa) {
      // A relative loss cannot go below -100 %; the demo's priors make this a formality.
      do trueEffect = samplers[family](random);
      while (trueEffect <= -0.9);
    }
    const secondaryDraw = random.uniform();
    let secondary: DemoFamily | null = null;
    if (family === "conversion" && secondaryDraw < parameters.secondary.revenueOnConversionTests)
      secondary = "revenue";
    if (family === "revenue" && secondaryDraw < parameters.secondary.conversionOnRevenueTests)
      secondary = "conversion";
    const peeked = random.uniform() < parameters.peeking.share;
    const style = pickWeighted(random, styles);
    const percent = random.uniform() < reporting.percentShare && style !== "raw";
    const level = random.uniform() < reporting.ninetyLevelShare ? 0.9 : 0.95;
    const startDay = firstDay + random.integer(lastDay - firstDay - runDays + 1);
    const idea = team.ideas[random.integer(team.ideas.length)]!;
    plans.push({
      index,
      team,
      family,
      isAa,
      baselineRate,
      runDays,
      plannedNPerArm: Math.max(100, Math.round((dailyUnits * runDays) / 2)),
      trueEffect,
      secondary,
      peeked,
      style,
      percent,
      level,
      startDay,
      idea,
      iterateDraw: random.uniform(),
      holdoutDelayDays: Math.round(uniformIn(random, parameters.holdouts.delayDays)),
      holdoutSeFactor: uniformIn(random, parameters.holdouts.standardErrorFactor),
      holdoutNoise: random.normal(),
      realizedPercent: random.uniform() < reporting.percentShare,
    });
  }
  return plans;
}

function armData(family: DemoFamily, control: ArmTotals, treatment: ArmTotals): ArmData {
  if (family === "revenue") {
    const controlSpend = spendMoments(control);
    const treatmentSpend = spendMoments(treatment);
    return {
      kind: "continuous",
      controlN: control.units,
      treatmentN: treatment.units,
      controlMean: controlSpend.mean,
      controlSd: controlSpend.sd,
      treatmentMean: treatmentSpend.mean,
      treatmentSd: treatmentSpend.sd,
    };
  }
  return {
    kind: "binary",
    controlN: control.units,
    treatmentN: treatment.units,
    controlConversions: control.conversions,
    treatmentConversions: treatment.conversions,
  };
}

/** True effects of the primary and secondary metrics (see DemoParameters.secondary). */
function metricEffects(plan: PlannedExperiment): { family: DemoFamily; trueEffect: number }[] {
  const effects = [{ family: plan.family, trueEffect: plan.trueEffect }];
  if (plan.secondary) {
    effects.push({ family: plan.secondary, trueEffect: plan.family === "conversion" ? plan.trueEffect : 0 });
  }
  return effects;
}

function simulateExperiment(
  parameters: DemoParameters,
  plan: PlannedExperiment,
  srmInjected: boolean,
  random: RandomSource,
): SimulatedExperiment {
  const criticalZ = normalQuantile(1 - parameters.alpha / 2);
  const totalUnits = 2 * plan.plannedNPerArm;
  // A split drawn off 50/50 by chance alone is redrawn, so that the flagged tests are exactly
  // the injected ones (a chance flag would occur about once in 2000 tests).
  let treatmentAssigned = binomialApproximate(random, totalUnits, 0.5);
  while (
    !srmInjected &&
    sampleRatioMismatch([totalUnits - treatmentAssigned, treatmentAssigned], [0.5, 0.5]).pValue <
      sampleRatioMismatchThreshold
  ) {
    treatmentAssigned = binomialApproximate(random, totalUnits, 0.5);
  }
  const assigned = { control: totalUnits - treatmentAssigned, treatment: treatmentAssigned };
  const lostArm = srmInjected ? (random.uniform() < 0.5 ? "treatment" : "control") : null;
  const srm = parameters.sampleRatioMismatch;
  const lostShare = srmInjected
    ? Math.min(0.2, Math.max(uniformIn(random, srm.lostShare), (2 * srm.minimumZ) / Math.sqrt(totalUnits)))
    : 0;
  const conversionEffect = plan.family === "conversion" || plan.family === "retention" ? plan.trueEffect : 0;
  const spendEffect = plan.family === "revenue" ? plan.trueEffect : 0;
  const needsSpend = plan.family === "revenue" || plan.secondary === "revenue";
  const spendModel = parameters.spend;
  const treatmentRate = Math.min(0.999, plan.baselineRate * (1 + conversionEffect));
  const looks = plan.peeked ? [...parameters.peeking.looks, 1] : [1];
  const control = emptyArmTotals();
  const treatment = emptyArmTotals();
  const analysed = { control: 0, treatment: 0 };
  const effects = metricEffects(plan);
  let reports: { family: DemoFamily; trueEffect: number; reported: ReportedResult }[] = [];
  let sampleFraction = 1;
  let stoppedEarly = false;
  for (const [lookIndex, fraction] of looks.entries()) {
    for (const arm of ["control", "treatment"] as const) {
      const upTo = Math.round(assigned[arm] * fraction);
      const batch = upTo - analysed[arm];
      analysed[arm] = upTo;
      addArmBatch(
        arm === "control" ? control : treatment,
        {
          assigned: batch,
          lost: lostArm === arm ? Math.round(batch * lostShare) : 0,
          rate: arm === "control" ? plan.baselineRate : treatmentRate,
          ...(needsSpend
            ? {
                spend: {
                  logMean: spendModel.logMean,
                  logSd: spendModel.logSd,
                  multiplier: arm === "control" ? 1 : 1 + spendEffect,
                },
              }
            : {}),
        },
        random,
      );
    }
    reports = effects.map(({ family, trueEffect }) => ({
      family,
      trueEffect,
      reported: reportResult(armData(family, control, treatment), plan),
    }));
    const primary = reports[0]!.reported;
    const isLastLook = lookIndex === looks.length - 1;
    if (!isLastLook && Math.abs(primary.lift / primary.standardError) > criticalZ) {
      stoppedEarly = true;
      sampleFraction = fraction;
      break;
    }
  }
  const endDay = plan.startDay + Math.max(1, Math.round(plan.runDays * sampleFraction));
  const primary = reports[0]!.reported;
  const z = primary.lift / primary.standardError;
  const lastDay = dayNumber(parameters.lastDay);
  let decision: DemoDecision;
  if (endDay > lastDay - parameters.decisions.pendingDays) decision = "pending";
  else if (plan.isAa) decision = "not_shipped";
  else if (z > criticalZ) decision = "shipped";
  else if (
    !stoppedEarly &&
    z > parameters.decisions.iterateMinimumZ &&
    plan.iterateDraw < parameters.decisions.iterateShare
  )
    decision = "iterate";
  else decision = "not_shipped";
  return {
    plan,
    reports,
    controlN: control.units,
    treatmentN: treatment.units,
    srmInjected,
    lostArm,
    lostShare,
    srmPValue: sampleRatioMismatch([control.units, treatment.units], [0.5, 0.5]).pValue,
    stoppedEarly,
    sampleFraction,
    endDay,
    decision,
  };
}

function expectedObservedLift(
  trueEffect: number,
  lostArm: "control" | "treatment" | null,
  lostShare: number,
) {
  // The lost units never convert nor spend: the affected arm's per-unit value grows by 1 / (1 - lost).
  if (lostArm === "treatment") return (1 + trueEffect) / (1 - lostShare) - 1;
  if (lostArm === "control") return (1 + trueEffect) * (1 - lostShare) - 1;
  return trueEffect;
}

function formatFraction(value: number, percent: boolean): string {
  const units = Math.round(value * 1e7);
  return percent ? `${(units / 1e5).toFixed(5)}%` : (units / 1e7).toFixed(7);
}

/** Simulates the demo history and its holdouts; see the module comment for the model. */
export function generateDemo(options: DemoOptions = {}): DemoData {
  const parameters = resolveDemoParameters(options);
  const random = createRandom(parameters.seed);
  const plans = planExperiments(parameters, random);
  const srmChosen = new Set(
    sampleWithoutReplacement(
      random,
      plans.filter((plan) => !plan.isAa).map((plan) => plan.index),
      parameters.sampleRatioMismatch.tests,
    ),
  );
  const simulated = plans.map((plan) =>
    simulateExperiment(parameters, plan, srmChosen.has(plan.index), random),
  );
  const lastDay = dayNumber(parameters.lastDay);
  const eligible = simulated
    .filter(
      (experiment) =>
        experiment.decision === "shipped" && experiment.endDay + experiment.plan.holdoutDelayDays <= lastDay,
    )
    .map((experiment) => experiment.plan.index);
  const withHoldout = new Set(sampleWithoutReplacement(random, eligible, parameters.holdouts.count));

  const ordered = [...simulated].sort(
    (a, b) => a.plan.startDay - b.plan.startDay || a.plan.index - b.plan.index,
  );
  const nextNumber = new Map<string, number>();
  const ideaOccurrences = new Map<string, number>();
  let aaNumber = 0;
  const historyRows: Record<string, string>[] = [];
  const realizedRows: Record<string, string>[] = [];
  const truthRows: DemoResultTruth[] = [];
  const alphaText = String(parameters.alpha);
  const powerText = String(parameters.power);
  for (const experiment of ordered) {
    const { plan } = experiment;
    const number = nextNumber.get(plan.team.name) ?? 1001;
    nextNumber.set(plan.team.name, number + 1);
    const key = `${plan.team.keyPrefix}-${number}`;
    let name: string;
    if (plan.isAa) {
      aaNumber += 1;
      name = `A/A check ${aaNumber} (${plan.team.focus})`;
    } else {
      const ideaKey = `${plan.team.name}/${plan.idea}`;
      const occurrence = (ideaOccurrences.get(ideaKey) ?? 0) + 1;
      ideaOccurrences.set(ideaKey, occurrence);
      name = occurrence > 1 ? `${plan.idea} v${occurrence}` : plan.idea;
    }
    const plannedMde = plannedMinimumDetectableEffect(
      parameters,
      plan.family,
      plan.baselineRate,
      plan.plannedNPerArm,
    );
    const plannedMdeText = plan.percent ? `${(plannedMde * 100).toFixed(2)}%` : plannedMde.toFixed(4);
    const startedOn = isoDate(plan.startDay);
    const endedOn = isoDate(experiment.endDay);
    const primaryReport = experiment.reports[0]!.reported;
    let holdout: DemoResultTruth["holdout"] = null;
    if (withHoldout.has(plan.index)) {
      const realizedSe = plan.holdoutSeFactor * primaryReport.standardError;
      const realizedLiftText = formatFraction(
        plan.trueEffect + realizedSe * plan.holdoutNoise,
        plan.realizedPercent,
      );
      const realizedSeText = formatFraction(realizedSe, plan.realizedPercent);
      const measuredOn = isoDate(experiment.endDay + plan.holdoutDelayDays);
      realizedRows.push({
        experiment: key,
        metric: parameters.metrics[plan.family].metric,
        realized_lift: realizedLiftText,
        realized_se: realizedSeText,
        method: "holdout",
        measured_on: measuredOn,
      });
      holdout = {
        realizedLift: readWrittenNumber(realizedLiftText),
        realizedSe: readWrittenNumber(realizedSeText),
        measuredOn,
      };
    }
    for (const [position, { family, trueEffect, reported }] of experiment.reports.entries()) {
      const metric = parameters.metrics[family];
      const isPrimary = position === 0;
      historyRows.push({
        experiment: key,
        name,
        team: plan.team.name,
        metric: metric.metric,
        metric_kind: metric.kind,
        direction: metric.direction,
        started_on: startedOn,
        ended_on: endedOn,
        decision: experiment.decision,
        is_aa: String(plan.isAa),
        stopped_early: String(experiment.stoppedEarly),
        planned_alpha: alphaText,
        planned_power: powerText,
        planned_mde: plannedMdeText,
        ...reported.cells,
        primary: String(isPrimary),
      });
      truthRows.push({
        key,
        name,
        team: plan.team.name,
        metric: metric.metric,
        family,
        isPrimary,
        isAa: plan.isAa,
        trueEffect,
        effectClass: plan.isAa ? "aa" : plan.trueEffect === 0 ? "null" : plan.trueEffect > 0 ? "win" : "loss",
        expectedObservedLift: expectedObservedLift(trueEffect, experiment.lostArm, experiment.lostShare),
        observedLift: reported.lift,
        observedSe: reported.standardError,
        inputForm: reported.form,
        percent: reported.percent,
        controlN: experiment.controlN,
        treatmentN: experiment.treatmentN,
        plannedNPerArm: plan.plannedNPerArm,
        plannedMde: readWrittenNumber(plannedMdeText),
        sampleRatioMismatchInjected: experiment.srmInjected,
        lostShare: experiment.lostShare,
        srmPValue: experiment.srmPValue,
        srmFlagged: experiment.srmPValue < sampleRatioMismatchThreshold,
        peeked: plan.peeked,
        stoppedEarly: experiment.stoppedEarly,
        sampleFraction: experiment.sampleFraction,
        decision: experiment.decision,
        startedOn,
        endedOn,
        holdout: isPrimary ? holdout : null,
      });
    }
  }
  return {
    historyCsv: formatCsv(historyColumns, historyRows),
    realizedCsv: formatCsv(realizedColumns, realizedRows),
    truth: {
      parameters,
      experiments: truthRows,
      counts: countDemo(truthRows, normalQuantile(1 - parameters.alpha / 2)),
    },
  };
}
