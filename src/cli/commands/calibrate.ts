/**
 * `plumbline calibrate`: the alpha, n per arm and run length that pay for this business
 * (statistics.md section 7), or, with --population, a test-and-roll plan (Feit & Berman 2019).
 */
import {
  type CalibrationPriorRequest,
  CalibrationSetupError,
  calibrateWorkspace,
} from "../../calibrate-workspace.ts";
import { openDatabaseFromEnv } from "../../config.ts";
import type { DatabaseHandle } from "../../db/client.ts";
import type { CalibratedDesign } from "../../stats/calibrate-defaults.ts";
import type { FitFamily } from "../../stats/fit-effect-prior.ts";
import { planTestAndRoll, type TestAndRollArm } from "../../stats/test-and-roll.ts";
import type { MetricScale } from "../../stats/test-value.ts";
import { requireWorkspaceByName, WorkspaceError } from "../../workspaces.ts";
import {
  type CalculatorCommand,
  FlagError,
  type Flags,
  notesBlock,
  numberFlag,
  runCalculatorCommand,
} from "../calculator-flags.ts";
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

/** One value or two comma-separated values (one per arm). */
function pairFlag(flags: Flags, name: string): [number, number] {
  const value = flags.text(name);
  if (value === undefined) throw new FlagError(`--${name} is required`);
  const parts = value.split(",").map((part) => numberFlag(name, part) as number);
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
} as const;

const testAndRollFlags = ["population", "prior-mean", "prior-sd", "response-sd"];
const defaultsFlags = Object.keys(options).filter(
  (flag) => flag !== "json" && !testAndRollFlags.includes(flag),
);

const armFlags = (index: 0 | 1) => {
  const which = index === 0 ? "first" : "second";
  return {
    [`arms[${index}].priorMean`]: `--prior-mean (${which} value)`,
    [`arms[${index}].priorSd`]: `--prior-sd (${which} value)`,
    [`arms[${index}].responseSd`]: `--response-sd (${which} value)`,
  };
};

const command: CalculatorCommand = {
  name: "calibrate",
  help,
  options,
  flagNames: {
    baselineRate: "--baseline",
    "winRate + lossRate": "--win-rate + --loss-rate",
    "maxDays * dailyTraffic / arms":
      "--max-days x --daily-traffic / --arms (the longest run's users per arm)",
    ...armFlags(0),
    ...armFlags(1),
  },
  userErrors: [CalibrationSetupError, WorkspaceError],
};

export async function run(args: string[], io: CommandIo): Promise<number> {
  return runCalculatorCommand(command, args, io, async (flags) => {
    if (flags.has("population")) {
      refuseFlags(flags, defaultsFlags, "--population (test-and-roll mode)");
      testAndRoll(flags, io);
      return;
    }
    refuseFlags(
      flags,
      testAndRollFlags.filter((flag) => flag !== "population"),
      "the defaults mode (test-and-roll needs --population)",
    );
    const request = {
      prior: priorFrom(flags),
      metric: metricFrom(flags),
      dailyTraffic: flags.requiredNumber("daily-traffic"),
      periodDays: flags.requiredNumber("period-days"),
      backlog: flags.requiredNumber("backlog"),
      valuePerLift: flags.requiredNumber("value-per-lift"),
      launchCost: flags.requiredNumber("launch-cost"),
      ...flags.optionalNumber("lossPenalty", "loss-penalty"),
      ...flags.optionalNumber("arms", "arms"),
      ...flags.optionalNumber("mde", "mde"),
      ...flags.optionalNumber("maxDays", "max-days"),
    };
    let handle: DatabaseHandle | undefined;
    try {
      let workspaceId: number | null = null;
      const workspaceName = flags.text("workspace");
      if (workspaceName !== undefined) {
        handle = await openDatabaseFromEnv();
        workspaceId = (await requireWorkspaceByName(handle.db, workspaceName)).id;
      }
      const report = await calibrateWorkspace(handle?.db ?? null, workspaceId, request);
      io.out(flags.has("json") ? JSON.stringify(report) : formatReport(report));
    } finally {
      handle?.close();
    }
  });
}

function refuseFlags(flags: Flags, names: readonly string[], mode: string): void {
  const given = names.filter((name) => flags.has(name));
  if (given.length > 0) {
    throw new FlagError(`${given.map((name) => `--${name}`).join(", ")} not used with ${mode}`);
  }
}

function metricFrom(flags: Flags): MetricScale {
  const baseline = flags.number("baseline");
  const mean = flags.number("mean");
  const sd = flags.number("sd");
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

function priorFrom(flags: Flags): CalibrationPriorRequest {
  const winRate = flags.number("win-rate");
  const family = flags.text("family");
  if (winRate !== undefined) {
    if (family !== undefined)
      throw new FlagError("give --family (fitted prior) or --win-rate (assumed prior), not both");
    if (flags.has("fit-family"))
      throw new FlagError("--fit-family is for a fitted prior (--family), not --win-rate");
    const shape = flags.choice("prior-shape", ["normal", "fat"] as const);
    return {
      source: "assumed",
      winRate,
      effectScale: flags.requiredNumber("effect-scale"),
      ...flags.optionalNumber("lossRate", "loss-rate"),
      ...(shape === undefined ? {} : { shape }),
    };
  }
  if (family === undefined) {
    throw new FlagError("the prior needs --workspace NAME --family F, or --win-rate P --effect-scale S");
  }
  if (!flags.has("workspace")) throw new FlagError("--family needs --workspace NAME");
  const assumedOnly = ["loss-rate", "effect-scale", "prior-shape"].filter((name) => flags.has(name));
  if (assumedOnly.length > 0) {
    throw new FlagError(
      `${assumedOnly.map((name) => `--${name}`).join(", ")} ${assumedOnly.length === 1 ? "needs" : "need"} --win-rate (an assumed prior)`,
    );
  }
  const fitFamily = flags.choice<FitFamily | "auto">("fit-family", fitFamilies);
  return { source: "workspace", family, ...(fitFamily === undefined ? {} : { fitFamily }) };
}

function testAndRoll(flags: Flags, io: CommandIo): void {
  const means = pairFlag(flags, "prior-mean");
  const sds = pairFlag(flags, "prior-sd");
  const responses = pairFlag(flags, "response-sd");
  const arm = (index: 0 | 1): TestAndRollArm => ({
    priorMean: means[index],
    priorSd: sds[index],
    responseSd: responses[index],
  });
  const plan = planTestAndRoll({
    population: flags.requiredNumber("population"),
    arms: [arm(0), arm(1)],
  });
  if (flags.has("json")) {
    io.out(JSON.stringify(plan));
    return;
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
    ...notesBlock(plan.assumptions, plan.cautions),
  ];
  io.out(lines.join("\n"));
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
    "Operating points (share of non-wins shipped -> share of real wins shipped; --json has the curves):",
    ...report.curves.operatingCurves.map(
      (curve) =>
        `  ${curve.design.padEnd(12)} ${formatNumber(curve.designPoint.falseShipRate * 100, 1).padStart(5)} % -> ` +
        `${formatNumber(curve.designPoint.trueShipRate * 100, 1).padStart(5)} %`,
    ),
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
    ...notesBlock(report.assumptions, report.cautions),
  ];
  return lines.join("\n");
}
