/**
 * `plumbline calibrate`: the alpha, n per arm and run length that pay for this business
 * (statistics.md section 7), or, with --population, a test-and-roll plan (Feit & Berman 2019).
 */
import { parseArgs } from "node:util";
import {
  type CalibrationPriorRequest,
  CalibrationSetupError,
  calibrateWorkspace,
} from "../../calibrate-workspace.ts";
import { openDatabaseFromEnv } from "../../config.ts";
import type { DatabaseHandle } from "../../db/client.ts";
import type { CalibratedDesign } from "../../stats/calibrate-defaults.ts";
import { StatsInputError } from "../../stats/errors.ts";
import type { FitFamily } from "../../stats/fit-effect-prior.ts";
import { planTestAndRoll, type TestAndRollArm } from "../../stats/test-and-roll.ts";
import type { MetricScale } from "../../stats/test-value.ts";
import { requireWorkspaceByName, WorkspaceError } from "../../workspaces.ts";
import type { CommandIo } from "../io.ts";

export const summary = "recommend the alpha, n per arm and run length that maximise the value of testing";

const help = `Usage:
  plumbline calibrate (--workspace NAME --family F [--fit-family symmetric|skewed|grid|auto]
                       | --win-rate P [--loss-rate Q] --effect-scale S [--prior-shape normal|fat] [--workspace NAME])
                      (--baseline RATE | --mean M --sd SD)
                      --daily-traffic N --period-days D --backlog K --value-per-lift V --launch-cost C
                      [--loss-penalty L] [--arms A] [--mde REL] [--max-days X] [--json]
  plumbline calibrate --population N --prior-mean MU --prior-sd SIGMA --response-sd S [--json]

Defaults mode (ship when the estimated lift y > z* s(n); n per arm; s on the relative-lift scale):
  --workspace NAME    workspace whose history gives the prior (with --family) and the current defaults
  --family F          metric family whose primary results the prior is fitted to
  --fit-family F      prior family to fit (default auto: the better of symmetric and skewed)
  --win-rate P        assumed share of ideas that are real wins
  --loss-rate Q       assumed share of real losses (default: the win rate)
  --effect-scale S    scale of the size of a real win or loss (relative lift, e.g. 0.02)
  --prior-shape       normal (half-normal sizes, default) or fat (half-t, 3 df)
  --baseline RATE     baseline conversion rate of the metric
  --mean M --sd SD    mean and per-user sd of a continuous metric
  --daily-traffic N   eligible users per day
  --period-days D     length of the period valued (e.g. 90)
  --backlog K         ideas available in the period
  --value-per-lift V  value of a relative lift of 1 (+100 %) over the period
  --launch-cost C     fixed cost of one launch
  --loss-penalty L    extra penalty for a shipped loss: worth V theta (1 + L) - C (default 0)
  --arms A            arms per test, control included (default 2)
  --mde REL           the relative effect the textbook design is powered for (default: mean real win)
  --max-days X        longest run allowed (default: the period)

Test-and-roll mode (test on a finite population, roll the winner out to the rest):
  --population N      users available in all
  --prior-mean MU     prior mean of an arm's mean response (MU1,MU2 for unequal priors)
  --prior-sd SIGMA    prior sd of an arm's mean response (SIGMA1,SIGMA2)
  --response-sd S     sd of one user's response (S1,S2)

  --json              print one JSON document`;

class FlagError extends Error {}

function numberFlag(name: string, value: string | undefined): number | undefined {
  if (value === undefined) return undefined;
  const parsed = Number(value.trim());
  if (value.trim() === "" || !Number.isFinite(parsed)) {
    throw new FlagError(`--${name} must be a number; got ${JSON.stringify(value)}`);
  }
  return parsed;
}

function requiredNumber(name: string, value: string | undefined): number {
  const parsed = numberFlag(name, value);
  if (parsed === undefined) throw new FlagError(`--${name} is required`);
  return parsed;
}

/** One value or two comma-separated values (one per arm). */
function pairFlag(name: string, value: string | undefined): [number, number] {
  if (value === undefined) throw new FlagError(`--${name} is required`);
  const parts = value.split(",").map((part) => requiredNumber(name, part));
  if (parts.length === 1) return [parts[0]!, parts[0]!];
  if (parts.length === 2) return [parts[0]!, parts[1]!];
  throw new FlagError(
    `--${name} takes one value or two comma-separated values; got ${JSON.stringify(value)}`,
  );
}

const options = {
  workspace: { type: "string" },
  family: { type: "string" },
  "fit-family": { type: "string" },
  "win-rate": { type: "string" },
  "loss-rate": { type: "string" },
  "effect-scale": { type: "string" },
  "prior-shape": { type: "string" },
  baseline: { type: "string" },
  mean: { type: "string" },
  sd: { type: "string" },
  "daily-traffic": { type: "string" },
  "period-days": { type: "string" },
  backlog: { type: "string" },
  "value-per-lift": { type: "string" },
  "launch-cost": { type: "string" },
  "loss-penalty": { type: "string" },
  arms: { type: "string" },
  mde: { type: "string" },
  "max-days": { type: "string" },
  population: { type: "string" },
  "prior-mean": { type: "string" },
  "prior-sd": { type: "string" },
  "response-sd": { type: "string" },
  json: { type: "boolean" },
  help: { type: "boolean", short: "h" },
} as const;

type Values = Record<string, string | boolean | undefined>;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let values: Values;
  try {
    ({ values } = parseArgs({ args, strict: true, allowPositionals: false, options }));
  } catch (error) {
    io.err(`plumbline calibrate: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  if (values.help) {
    io.out(help);
    return 0;
  }
  const text = (name: string) => values[name] as string | undefined;
  let handle: DatabaseHandle | undefined;
  try {
    if (text("population") !== undefined) return testAndRoll(values, io);
    const metric = metricFrom(values);
    const prior = priorFrom(values);
    const request = {
      prior,
      metric,
      dailyTraffic: requiredNumber("daily-traffic", text("daily-traffic")),
      periodDays: requiredNumber("period-days", text("period-days")),
      backlog: requiredNumber("backlog", text("backlog")),
      valuePerLift: requiredNumber("value-per-lift", text("value-per-lift")),
      launchCost: requiredNumber("launch-cost", text("launch-cost")),
      ...optionalNumber("lossPenalty", "loss-penalty", text("loss-penalty")),
      ...optionalNumber("arms", "arms", text("arms")),
      ...optionalNumber("mde", "mde", text("mde")),
      ...optionalNumber("maxDays", "max-days", text("max-days")),
    };
    let workspaceId: number | null = null;
    const workspaceName = text("workspace");
    if (workspaceName !== undefined) {
      handle = await openDatabaseFromEnv();
      workspaceId = (await requireWorkspaceByName(handle.db, workspaceName)).id;
    }
    const report = await calibrateWorkspace(handle?.db ?? null, workspaceId, request);
    if (values.json) {
      io.out(JSON.stringify(report));
      return 0;
    }
    io.out(formatReport(report));
    return 0;
  } catch (error) {
    if (error instanceof FlagError) {
      io.err(`plumbline calibrate: ${error.message}\n\n${help}`);
      return 2;
    }
    if (
      error instanceof StatsInputError ||
      error instanceof CalibrationSetupError ||
      error instanceof WorkspaceError
    ) {
      io.err(`plumbline calibrate: ${error.message}`);
      return 2;
    }
    throw error;
  } finally {
    handle?.close();
  }
}

function optionalNumber<K extends string>(
  key: K,
  flag: string,
  value: string | undefined,
): Partial<Record<K, number>> {
  const parsed = numberFlag(flag, value);
  return parsed === undefined ? {} : ({ [key]: parsed } as Record<K, number>);
}

function metricFrom(values: Values): MetricScale {
  const baseline = numberFlag("baseline", values.baseline as string | undefined);
  const mean = numberFlag("mean", values.mean as string | undefined);
  const sd = numberFlag("sd", values.sd as string | undefined);
  if (baseline !== undefined) {
    if (mean !== undefined || sd !== undefined)
      throw new FlagError("give --baseline or --mean with --sd, not both");
    return { kind: "rate", baselineRate: baseline };
  }
  if (mean === undefined || sd === undefined)
    throw new FlagError("the metric needs --baseline RATE or --mean M --sd SD");
  return { kind: "mean", mean, sd };
}

const fitFamilies = ["symmetric", "skewed", "grid", "auto"] as const;

function priorFrom(values: Values): CalibrationPriorRequest {
  const winRate = numberFlag("win-rate", values["win-rate"] as string | undefined);
  const family = values.family as string | undefined;
  if (winRate !== undefined) {
    if (family !== undefined)
      throw new FlagError("give --family (fitted prior) or --win-rate (assumed prior), not both");
    const shape = values["prior-shape"] as string | undefined;
    if (shape !== undefined && shape !== "normal" && shape !== "fat") {
      throw new FlagError(`--prior-shape must be normal or fat; got ${JSON.stringify(shape)}`);
    }
    const lossRate = numberFlag("loss-rate", values["loss-rate"] as string | undefined);
    return {
      source: "assumed",
      winRate,
      effectScale: requiredNumber("effect-scale", values["effect-scale"] as string | undefined),
      ...(lossRate === undefined ? {} : { lossRate }),
      ...(shape === undefined ? {} : { shape }),
    };
  }
  if (family === undefined) {
    throw new FlagError("the prior needs --workspace NAME --family F, or --win-rate P --effect-scale S");
  }
  if (values.workspace === undefined) throw new FlagError("--family needs --workspace NAME");
  const fitFamily = values["fit-family"] as string | undefined;
  if (fitFamily !== undefined && !(fitFamilies as readonly string[]).includes(fitFamily)) {
    throw new FlagError(
      `--fit-family must be one of ${fitFamilies.join(", ")}; got ${JSON.stringify(fitFamily)}`,
    );
  }
  return {
    source: "workspace",
    family,
    ...(fitFamily === undefined ? {} : { fitFamily: fitFamily as FitFamily | "auto" }),
  };
}

function testAndRoll(values: Values, io: CommandIo): number {
  const text = (name: string) => values[name] as string | undefined;
  const means = pairFlag("prior-mean", text("prior-mean"));
  const sds = pairFlag("prior-sd", text("prior-sd"));
  const responses = pairFlag("response-sd", text("response-sd"));
  const arm = (index: 0 | 1): TestAndRollArm => ({
    priorMean: means[index],
    priorSd: sds[index],
    responseSd: responses[index],
  });
  const plan = planTestAndRoll({
    population: requiredNumber("population", text("population")),
    arms: [arm(0), arm(1)],
  });
  if (values.json) {
    io.out(JSON.stringify(plan));
    return 0;
  }
  const lines = [
    "Test and roll: test on a part of the population, deploy the better arm to the rest",
    plan.nPerArm === null
      ? `  users per arm           ${plan.nByArm[0]} and ${plan.nByArm[1]} (numerical optimum)`
      : `  users per arm           ${plan.nPerArm} (Feit & Berman closed form)`,
    `  expected profit         ${plan.expectedProfit.toFixed(2)}`,
    `  with perfect information ${plan.perfectInformationProfit.toFixed(2)}`,
    `  regret                  ${plan.regret.toFixed(2)} (${(plan.regretShare * 100).toFixed(2)} %)`,
    `  error rate              ${(plan.errorRate * 100).toFixed(1)} % (deploys the worse arm)`,
    "",
    "Assumptions:",
    ...plan.assumptions.map((line) => `  - ${line}`),
    "",
    "Cautions:",
    ...plan.cautions.map((line) => `  - ${line}`),
  ];
  io.out(lines.join("\n"));
  return 0;
}

function formatNumber(value: number, digits = 0): string {
  return Number.isFinite(value)
    ? value.toLocaleString("en-US", { maximumFractionDigits: digits, minimumFractionDigits: digits })
    : "n/a";
}

function designLine(label: string, design: CalibratedDesign): string {
  return [
    label.padEnd(12),
    formatNumber(design.alpha, 3).padStart(7),
    formatNumber(design.nPerArm).padStart(10),
    formatNumber(design.days, 1).padStart(7),
    formatNumber(design.testsPerPeriod, 1).padStart(7),
    formatNumber(design.power * 100, 0).padStart(6),
    formatNumber(design.falsePositiveRisk * 100, 0).padStart(5),
    formatNumber(design.exaggeration, 2).padStart(6),
    formatNumber(design.expectedRealWins, 1).padStart(6),
    formatNumber(design.expectedFalseWins, 1).padStart(6),
    formatNumber(design.expectedValue).padStart(14),
    formatNumber(design.valueLeftOnTable).padStart(14),
  ].join(" ");
}

function formatReport(report: Awaited<ReturnType<typeof calibrateWorkspace>>): string {
  const header = [
    "design".padEnd(12),
    "alpha".padStart(7),
    "n/arm".padStart(10),
    "days".padStart(7),
    "tests".padStart(7),
    "power%".padStart(6),
    "FPR%".padStart(5),
    "exagg".padStart(6),
    "real".padStart(6),
    "false".padStart(6),
    "value/period".padStart(14),
    "left on table".padStart(14),
  ].join(" ");
  const lines = [
    "Recommended defaults (ship when the estimated lift exceeds z* standard errors)",
    `  one-sided threshold z* = ${report.recommended.threshold.toFixed(3)}, two-sided alpha ${report.recommended.alpha.toFixed(4)}`,
    "",
    header,
    designLine("recommended", report.recommended),
    designLine("textbook", report.textbook),
    ...(report.current ? [designLine("current", report.current)] : []),
    "",
    `Optimum check: ${report.optimum.check.isMaximum ? "no neighbouring design is better" : "A NEIGHBOUR IS BETTER"}` +
      (report.optimum.check.atBounds.length > 0
        ? ` (on the bound: ${report.optimum.check.atBounds.join(", ")})`
        : "") +
      (report.optimum.check.backlogBinds ? "; the backlog limits the tests per period" : ""),
    "",
    `Sensitivity (${report.sensitivity.fragile ? "FRAGILE" : "robust"}: ${report.sensitivity.fragileRule}):`,
    ...report.sensitivity.scenarios.map(
      (scenario) =>
        `  ${scenario.label.padEnd(20)} alpha ${scenario.recommended.alpha.toFixed(3)}, n/arm ${formatNumber(scenario.recommended.nPerArm)}, ` +
        `value ${formatNumber(scenario.recommended.expectedValue)}; the base recommendation would forgo ${formatNumber(scenario.shareOfValueForgone * 100, 1)} %`,
    ),
    "",
    "Assumptions:",
    ...report.assumptions.map((line) => `  - ${line}`),
    "",
    "Cautions:",
    ...report.cautions.map((line) => `  - ${line}`),
  ];
  return lines.join("\n");
}
