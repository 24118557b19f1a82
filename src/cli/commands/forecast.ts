/**
 * `plumbline forecast`: what the planned tests will deliver (statistics.md section 8).
 * Workspace form: the stored backlog, with priors fitted to the workspace's history.
 * Stateless form: a plan file and an assumed prior (statistics.md section 7).
 * Progress goes to stderr; --json prints one document on stdout; --html writes a self-contained page.
 */
import { readFileSync, writeFileSync } from "node:fs";
import { parseArgs } from "node:util";
import { renderForecastHtml } from "../../backlog/forecast-html.ts";
import { type ForecastReport, forecastReport } from "../../backlog/forecast-report.ts";
import { parseRuleSpec, type RuleSpec } from "../../backlog/forecast-rules.ts";
import { readPlanFile } from "../../backlog/read-plan-file.ts";
import { runForecastInSteps } from "../../backlog/run-forecast-in-steps.ts";
import {
  ForecastSetupError,
  type PriorDraws,
  prepareWorkspaceForecast,
  priorDrawModes,
} from "../../backlog/workspace-forecast.ts";
import { ConfigError, openDatabaseFromEnv } from "../../config.ts";
import { type AssumedPriorInput, assumedPrior } from "../../stats/assumed-prior.ts";
import { StatsInputError } from "../../stats/errors.ts";
import { defaultForecastSimulations } from "../../stats/forecast-backlog.ts";
import { criticalValueForAlpha, textbookAlpha } from "../../stats/forecast-rule.ts";
import { requireWorkspaceByName, WorkspaceError } from "../../workspaces.ts";
import type { CommandIo } from "../io.ts";

export const summary =
  "forecast what the planned tests will deliver: shipped, real and false wins, claimed and realized lift";

const help = `Usage:
  plumbline forecast --workspace NAME [--rule current|recommended|alpha=A]... [--target LIFT]
                     [--sims R] [--seed S] [--json] [--html OUT.html]
                     [--win-rate P --effect-scale S ...]   (assumed prior for families with little history)
                     [--value-per-lift V --launch-cost C]  (economics for --rule recommended)
                     [--prior-draws fixed|bootstrap [--bootstrap B]]
  plumbline forecast --plan FILE.csv --win-rate P [--loss-rate Q] --effect-scale S
                     [--prior-shape normal|fat] [--rule alpha=A]... [--target LIFT] [--sims R] [--seed S]
                     [--json] [--html OUT.html]

Simulates R quarters (default ${defaultForecastSimulations}): each planned test's true effect is drawn from
its prior, its estimate around it with the planned SE, and it ships when the estimate clears the
rule. Several --rule flags are compared on the same draws; the first is the headline.
A plan file has columns name, se, or name, n_per_arm, baseline (a rate), or name, n_per_arm, mean,
sd; team is optional. Lifts are relative (0.02 or 2% is +2 %). The seed is echoed (default 1).
--prior-draws bootstrap draws each simulated quarter's fitted prior from B bootstrap refits of the
fit (default 100), so the ranges carry the uncertainty of the fitted priors; fixed (the default)
takes them as known.`;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let values: Record<string, string | boolean | string[] | undefined>;
  try {
    ({ values } = parseArgs({
      args,
      strict: true,
      allowPositionals: false,
      options: {
        workspace: { type: "string" },
        plan: { type: "string" },
        rule: { type: "string", multiple: true },
        target: { type: "string" },
        sims: { type: "string" },
        seed: { type: "string" },
        json: { type: "boolean" },
        html: { type: "string" },
        "win-rate": { type: "string" },
        "loss-rate": { type: "string" },
        "effect-scale": { type: "string" },
        "prior-shape": { type: "string" },
        "value-per-lift": { type: "string" },
        "launch-cost": { type: "string" },
        "prior-draws": { type: "string" },
        bootstrap: { type: "string" },
        help: { type: "boolean", short: "h" },
      },
    }));
  } catch (error) {
    io.err(`plumbline forecast: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  if (values.help) {
    io.out(help);
    return 0;
  }
  const usageError = (message: string) => {
    io.err(`plumbline forecast: ${message}\n\n${help}`);
    return 2;
  };
  const workspace = values.workspace as string | undefined;
  const plan = values.plan as string | undefined;
  if ((workspace === undefined) === (plan === undefined))
    return usageError("give either --workspace NAME or --plan FILE.csv");

  const number = (flag: string): number | undefined | { error: string } => {
    const text = values[flag] as string | undefined;
    if (text === undefined) return undefined;
    const trimmed = text.trim();
    const value = trimmed.endsWith("%") ? Number(trimmed.slice(0, -1)) / 100 : Number(trimmed);
    return trimmed !== "" && Number.isFinite(value)
      ? value
      : { error: `--${flag} must be a number; got "${text}"` };
  };
  const flags: Record<string, number | undefined> = {};
  for (const flag of [
    "target",
    "sims",
    "seed",
    "win-rate",
    "loss-rate",
    "effect-scale",
    "value-per-lift",
    "launch-cost",
    "bootstrap",
  ]) {
    const value = number(flag);
    if (typeof value === "object") return usageError(value.error);
    flags[flag] = value;
  }
  const sims = flags["sims"] ?? defaultForecastSimulations;
  if (!Number.isInteger(sims) || sims < 2)
    return usageError(`--sims must be a whole number of at least 2; got ${values.sims}`);
  const seed = flags["seed"] ?? 1;
  if (!Number.isInteger(seed) || Math.abs(seed) > 2147483647)
    return usageError(`--seed must be a 32-bit whole number; got ${values.seed}`);
  const shape = values["prior-shape"] as string | undefined;
  if (shape !== undefined && shape !== "normal" && shape !== "fat")
    return usageError(`--prior-shape must be normal or fat; got "${shape}"`);
  const priorDraws = values["prior-draws"] as string | undefined;
  if (priorDraws !== undefined && !(priorDrawModes as readonly string[]).includes(priorDraws))
    return usageError(`--prior-draws must be fixed or bootstrap; got "${priorDraws}"`);
  const bootstrapReplicates = flags["bootstrap"];
  if (
    bootstrapReplicates !== undefined &&
    (!Number.isInteger(bootstrapReplicates) || bootstrapReplicates < 2)
  )
    return usageError(`--bootstrap must be a whole number of at least 2; got ${values.bootstrap}`);
  if (bootstrapReplicates !== undefined && priorDraws !== "bootstrap")
    return usageError("--bootstrap B goes with --prior-draws bootstrap");
  const priorGiven = flags["win-rate"] !== undefined || flags["effect-scale"] !== undefined;
  if (priorGiven && (flags["win-rate"] === undefined || flags["effect-scale"] === undefined))
    return usageError("an assumed prior needs both --win-rate and --effect-scale");
  const assumed: AssumedPriorInput | null = priorGiven
    ? {
        winRate: flags["win-rate"]!,
        ...(flags["loss-rate"] === undefined ? {} : { lossRate: flags["loss-rate"] }),
        effectScale: flags["effect-scale"]!,
        ...(shape === undefined ? {} : { shape: shape as "normal" | "fat" }),
      }
    : null;
  const rules: RuleSpec[] = [];
  for (const text of (values.rule as string[] | undefined) ?? ["current"]) {
    const spec = parseRuleSpec(text);
    if ("error" in spec) return usageError(spec.error);
    rules.push(spec);
  }
  const progress = (completed: number, total: number) =>
    io.progress(
      `forecast: ${completed} of ${total} simulations (${Math.round((100 * completed) / total)} %)`,
    );

  try {
    let report: ForecastReport;
    if (plan !== undefined) {
      if (!assumed) return usageError("--plan needs an assumed prior: --win-rate P --effect-scale S");
      if (rules.some((spec) => spec.kind === "recommended"))
        return usageError("--rule recommended needs a workspace; with --plan use current or alpha=A");
      if (priorDraws === "bootstrap")
        return usageError(
          "--prior-draws bootstrap needs a workspace: an assumed prior has no fit to resample",
        );
      let content: string;
      try {
        content = readFileSync(plan, "utf8");
      } catch (error) {
        io.err(`plumbline forecast: cannot read ${plan}: ${(error as Error).message}`);
        return 1;
      }
      const read = readPlanFile(content);
      if (!read.ok) {
        if (values.json)
          io.out(
            JSON.stringify({
              error: { code: "invalid_plan", message: `${plan} has errors`, issues: read.errors },
            }),
          );
        else {
          io.err(`plumbline forecast: ${plan} has ${read.errors.length} error(s); nothing was forecast:`);
          for (const error of read.errors)
            io.err(`  row ${error.row}${error.column ? `, column ${error.column}` : ""}: ${error.message}`);
        }
        return 1;
      }
      const prior = assumedPrior(assumed);
      const forecast = await runForecastInSteps(
        {
          tests: read.tests.map((test) => ({ ...test, family: "plan", prior })),
          rules: rules.map((spec) =>
            spec.kind === "alpha"
              ? { label: `alpha=${spec.alpha}`, criticalValue: criticalValueForAlpha(spec.alpha) }
              : { label: "current", criticalValue: criticalValueForAlpha(textbookAlpha) },
          ),
          simulations: sims,
          seed,
          target: flags["target"] ?? null,
        },
        { onProgress: progress },
      );
      report = forecastReport(forecast, {
        priors: [
          { family: "plan", source: "assumed", prior, observations: 0, logLik: null, bootstrapReplicates: 0 },
        ],
        rules: rules.map((spec) =>
          spec.kind === "alpha"
            ? {
                label: `alpha=${spec.alpha}`,
                description: `ship when y > z* s with z* = Phi^-1(1 - ${spec.alpha}/2)`,
              }
            : {
                label: "current",
                description: `without a workspace: the textbook alpha = ${textbookAlpha} (two-sided)`,
              },
        ),
        assumptions: [
          `Plan file ${plan}: ${read.tests.length} planned tests, SEs by the conventions of statistics.md section 7.`,
          `Assumed prior (statistics.md section 7): win rate ${assumed.winRate}, loss rate ${assumed.lossRate ?? assumed.winRate}, effect scale ${assumed.effectScale}, shape ${assumed.shape ?? "normal"}.`,
        ],
      });
    } else {
      const handle = await openDatabaseFromEnv();
      try {
        const found = await requireWorkspaceByName(handle.db, workspace!);
        const economics =
          flags["value-per-lift"] !== undefined && flags["launch-cost"] !== undefined
            ? { valuePerLift: flags["value-per-lift"], launchCost: flags["launch-cost"] }
            : null;
        const prepared = await prepareWorkspaceForecast(handle.db, found.id, {
          rules,
          simulations: sims,
          seed,
          target: flags["target"] ?? null,
          fallbackPrior: assumed,
          economics,
          ...(priorDraws === undefined ? {} : { priorDraws: priorDraws as PriorDraws }),
          ...(bootstrapReplicates === undefined ? {} : { bootstrapReplicates }),
        });
        const forecast = await runForecastInSteps(prepared.input, { onProgress: progress });
        report = forecastReport(forecast, {
          workspace: found.name,
          priors: prepared.priors,
          rules: prepared.rules,
          assumptions: prepared.assumptions,
        });
      } finally {
        handle.close();
      }
    }
    if (values.html !== undefined) writeFileSync(values.html as string, await renderForecastHtml(report));
    if (values.json) io.out(JSON.stringify(report));
    else io.out(formatReport(report, values.html as string | undefined));
    return 0;
  } catch (error) {
    if (
      error instanceof StatsInputError ||
      error instanceof ForecastSetupError ||
      error instanceof WorkspaceError ||
      error instanceof ConfigError
    ) {
      io.err(`plumbline forecast: ${error.message}`);
      return 1;
    }
    throw error;
  }
}

function formatReport(report: ForecastReport, htmlPath: string | undefined): string {
  const pct = (value: number) => `${(value * 100).toFixed(2)} %`;
  const num = (value: number) => value.toFixed(2);
  // Quantiles of a count are whole unless type-7 interpolation falls between two counts.
  const count = (value: number) => String(Number(value.toFixed(1)));
  const signed = (text: string) => (text.startsWith("-") ? text : `+${text}`);
  const lines: string[] = [
    `Backlog forecast${report.workspace ? ` for ${report.workspace}` : ""}: ${report.plannedTests} planned tests, ${report.sims} simulated quarters, seed ${report.seed}`,
    "",
  ];
  for (const rule of report.rules) {
    lines.push(`Rule ${rule.label}${rule.description ? `: ${rule.description}` : ""}`);
    lines.push(
      `${"".padEnd(17)}${"mean (expected)".padEnd(21)}${["5 %", "25 %", "50 %", "75 %", "95 %"].map((label) => label.padStart(8)).join(" ")}`,
    );
    const row = (
      label: string,
      summary: (typeof rule)["shipped"],
      format: (value: number) => string,
      quantileFormat: (value: number) => string = format,
    ) => {
      const q = summary.quantiles;
      const expected = summary.expected === null ? "" : ` (${format(summary.expected)})`;
      lines.push(
        `  ${label.padEnd(14)} ${`${format(summary.mean)}${expected}`.padEnd(20)} ${[q.p5, q.p25, q.p50, q.p75, q.p95].map((value) => quantileFormat(value).padStart(8)).join(" ")}`,
      );
    };
    row("shipped", rule.shipped, num, count);
    row("real wins", rule.realWins, num, count);
    row("false wins", rule.falseWins, num, count);
    row("claimed lift", rule.claimedLift, pct);
    row("realized lift", rule.realizedLift, pct);
    row("gap", rule.liftGap, pct);
    if (rule.probabilityToReachTarget)
      lines.push(
        `  P(realized >= ${pct(report.target ?? 0)}) = ${pct(rule.probabilityToReachTarget.estimate)}`,
      );
    lines.push("");
  }
  for (const difference of report.comparison)
    lines.push(
      `${difference.label} vs ${difference.baseline} (same simulated quarters): ${signed(num(difference.shipped.mean))} shipped, ${signed(num(difference.falseWins.mean))} false wins, realized lift ${signed(pct(difference.realizedLift.mean))} (5-95 %: ${pct(difference.realizedLift.quantiles.p5)} to ${pct(difference.realizedLift.quantiles.p95)}); ${difference.label} realizes at least as much in ${pct(difference.probabilityRealizedAtLeastBaseline.estimate)} of quarters`,
    );
  if (htmlPath) lines.push(`Written: ${htmlPath}`);
  lines.push("", "Cautions:", ...report.cautions.map((text) => `  - ${text}`));
  return lines.join("\n");
}
