/**
 * `plumbline fit FILE.csv`: the empirical-Bayes fit of the distribution of true effects for any
 * file of results (columns lift,se or y,s), statelessly: no database. statistics.md section 5.
 */
import { closeSync, openSync, readFileSync, writeSync } from "node:fs";
import { parseArgs } from "node:util";
import { parse } from "csv-parse/sync";
import { type BootstrapInterval, bootstrapPrior, type PriorBootstrap } from "../../stats/bootstrap-prior.ts";
import type { PriorComponent } from "../../stats/effect-prior.ts";
import { StatsInputError } from "../../stats/errors.ts";
import {
  defaultNullWeight,
  type FamilyFit,
  type FitFamily,
  fitEffectPrior,
  type Observation,
} from "../../stats/fit-effect-prior.ts";
import { defaultCredibleLevel } from "../../stats/posterior.ts";
import { summarizePrior } from "../../stats/prior-summary.ts";
import { helperThread } from "../../threads/helper-thread.ts";
import { posteriorColumnsOnThreads, threadedPosteriorRows } from "../../threads/posterior-threads.ts";
import type { CommandIo } from "../io.ts";

export const summary = "fit the distribution of true effects to a CSV of results and shrink every result";

const help = `Usage:
  plumbline fit FILE.csv [--family symmetric|skewed|grid|auto] [--null-weight W] [--level L]
                [--threshold D] [--bootstrap B --seed S] [--posteriors OUT.csv] [--json]

FILE.csv has a header with columns lift,se (or y,s): each result's estimated relative lift and
its standard error. Fits the prior of true effects by maximum marginal likelihood (mix-SQP):
  --family       symmetric (null + zero-mean normals), skewed (null + uniforms on [0,a] and
                 [-a,0]), grid (null + point masses: the nonparametric MLE), or auto (default:
                 the better of symmetric and skewed by log-likelihood; all three reported)
  --null-weight  penalty favouring the null share, >= 1 (default ${defaultNullWeight}; 1 = no penalty)
  --level        level of the posterior credible intervals (default ${defaultCredibleLevel})
  --threshold    practical threshold D >= 0 for the win and loss rates (default 0)
  --bootstrap    B bootstrap refits for intervals of every summary (with --seed S, default 1)
  --posteriors   write one row per input row: posterior_mean, posterior_sd, lower, upper,
                 prob_positive, prob_null, prob_negative, lfsr
  --json         print one JSON document`;

const assumptions = [
  "Each result is an unbiased normal estimate y ~ N(theta, s^2) of its true lift theta, with s known.",
  "True lifts are independent draws from one prior; results from different metric families should be fitted separately.",
  "The null penalty settles the split between exact nulls and tiny effects, which the data barely identify; the null share is conservative by design.",
];

const cautions = [
  "These estimates do not replace a statistician's review.",
  "Not for clinical or safety-critical decisions.",
];

interface RowIssue {
  readonly row: number;
  readonly column: string | null;
  readonly message: string;
}

export async function run(args: string[], io: CommandIo): Promise<number> {
  let parsed: { values: Record<string, string | boolean | undefined>; positionals: string[] };
  try {
    parsed = parseArgs({
      args,
      strict: true,
      allowPositionals: true,
      options: {
        family: { type: "string" },
        "null-weight": { type: "string" },
        level: { type: "string" },
        threshold: { type: "string" },
        bootstrap: { type: "string" },
        seed: { type: "string" },
        posteriors: { type: "string" },
        json: { type: "boolean" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (error) {
    io.err(`plumbline fit: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  const { values, positionals } = parsed;
  const json = values.json === true;
  if (values.help) {
    io.out(help);
    return 0;
  }
  const fail = (code: number, message: string, issues?: readonly RowIssue[]): number => {
    if (json)
      io.out(
        JSON.stringify({
          error: { code: code === 2 ? "bad_request" : "validation_failed", message, issues: issues ?? [] },
        }),
      );
    else {
      io.err(`plumbline fit: ${message}`);
      for (const issue of issues ?? [])
        io.err(`  row ${issue.row}${issue.column ? `, column ${issue.column}` : ""}: ${issue.message}`);
    }
    return code;
  };
  if (positionals.length !== 1) return fail(2, `give exactly one FILE.csv\n\n${help}`);
  const family = (values.family as string | undefined) ?? "auto";
  if (!["symmetric", "skewed", "grid", "auto"].includes(family))
    return fail(2, `--family must be symmetric, skewed, grid or auto; got "${family}"`);
  const numberFlag = (name: string, fallback: number): number | string => {
    const raw = values[name];
    if (raw === undefined) return fallback;
    const value = Number(raw);
    return Number.isFinite(value) && String(raw).trim() !== ""
      ? value
      : `--${name} must be a number; got "${raw}"`;
  };
  const nullWeight = numberFlag("null-weight", defaultNullWeight);
  const level = numberFlag("level", defaultCredibleLevel);
  const threshold = numberFlag("threshold", 0);
  const replicates = numberFlag("bootstrap", 0);
  const seed = numberFlag("seed", 1);
  for (const value of [nullWeight, level, threshold, replicates, seed])
    if (typeof value === "string") return fail(2, value);
  if ((nullWeight as number) < 1)
    return fail(2, `--null-weight must be at least 1 (1 = no penalty); got ${nullWeight}`);
  if (!((level as number) > 0 && (level as number) < 1))
    return fail(2, `--level must be strictly between 0 and 1; got ${level}`);
  if ((threshold as number) < 0) return fail(2, `--threshold must be at least 0; got ${threshold}`);
  if (!Number.isInteger(replicates) || (replicates as number) < 0)
    return fail(2, `--bootstrap must be a whole number; got ${replicates}`);
  if (!Number.isInteger(seed)) return fail(2, `--seed must be an integer; got ${seed}`);
  if (values.seed !== undefined && replicates === 0) return fail(2, "--seed needs --bootstrap B");

  const file = positionals[0] as string;
  let content: string;
  try {
    content = readFileSync(file, "utf8");
  } catch (error) {
    return fail(1, `cannot read ${file}: ${(error as Error).message}`);
  }
  const read = readObservations(content);
  if ("issues" in read) return fail(1, `${file}: ${read.message}`, read.issues);
  const observations = read.observations;
  // A large file's posteriors are shared with a helper thread, started now so that it is up by then.
  if (values.posteriors !== undefined && observations.length >= threadedPosteriorRows) helperThread();

  let fit: ReturnType<typeof fitEffectPrior>;
  let bootstrap: PriorBootstrap | undefined;
  try {
    fit = fitEffectPrior(observations, {
      family: family as FitFamily | "auto",
      nullWeight: nullWeight as number,
    });
    if ((replicates as number) > 0) {
      bootstrap = bootstrapPrior(observations, fit, {
        replicates: replicates as number,
        seed: seed as number,
        threshold: threshold as number,
        level: level as number,
        onProgress: (done, total) => {
          if (done === total || done % Math.max(1, Math.floor(total / 20)) === 0)
            io.progress(`bootstrap ${done}/${total}`);
        },
      });
    }
  } catch (error) {
    if (error instanceof StatsInputError) return fail(1, error.message);
    throw error;
  }
  const priorSummary = summarizePrior(fit.prior, { threshold: threshold as number });
  if (values.posteriors !== undefined) {
    const columns = await posteriorColumnsOnThreads(
      fit.prior,
      observations.map((observation) => observation.y),
      observations.map((observation) => observation.s),
      level as number,
    );
    // Written a block of rows at a time: one string of a million rows would hold about 150 MB.
    let file: number | null = null;
    try {
      file = openSync(values.posteriors as string, "w");
      writeSync(file, "posterior_mean,posterior_sd,lower,upper,prob_positive,prob_null,prob_negative,lfsr\n");
      const blockRows = 10_000;
      for (let from = 0; from < observations.length; from += blockRows) {
        let block = "";
        for (let i = from; i < Math.min(observations.length, from + blockRows); i++) {
          block += `${columns.mean[i]},${columns.sd[i]},${columns.lower[i]},${columns.upper[i]},${columns.probPositive[i]},${columns.probNull[i]},${columns.probNegative[i]},${columns.lfsr[i]}\n`;
        }
        writeSync(file, block);
      }
    } catch (error) {
      return fail(1, `cannot write ${values.posteriors}: ${(error as Error).message}`);
    } finally {
      if (file !== null) closeSync(file);
    }
  }
  const document = {
    family: fit.family,
    observationCount: fit.observationCount,
    components: fit.prior.components.map(({ component, weight }) => ({
      ...describeComponent(component),
      weight,
    })),
    nullWeight: fit.nullWeight,
    logLik: fit.logLik,
    penalizedLogLik: fit.penalizedLogLik,
    iterations: fit.iterations,
    converged: fit.converged,
    optimalityGap: fit.optimalityGap,
    summary: {
      threshold: priorSummary.threshold,
      nullShare: priorSummary.nullShare,
      winRate: priorSummary.winRate,
      lossRate: priorSummary.lossRate,
      meanWinSize: priorSummary.meanWinSize,
      meanLossSize: priorSummary.meanLossSize,
      mean: priorSummary.mean,
      sd: priorSummary.sd,
    },
    ...(fit.alternatives ? { alternatives: fit.alternatives.map(describeFamilyFit) } : {}),
    ...(bootstrap
      ? {
          intervals: {
            replicates: bootstrap.replicates,
            seed: bootstrap.seed,
            level: bootstrap.level,
            convergedRefits: bootstrap.convergedCount,
            ...bootstrap.intervals,
          },
        }
      : {}),
    level,
    ...(values.posteriors !== undefined ? { posteriorsFile: values.posteriors } : {}),
    assumptions,
    cautions,
  };
  if (json) {
    io.out(JSON.stringify(document, null, 2));
    return 0;
  }
  const percent = (value: number) => `${(100 * value).toFixed(1)} %`;
  const interval = (entry: BootstrapInterval | null | undefined, format: (value: number) => string) =>
    entry ? ` (${bootstrap?.level ?? level} interval ${format(entry.lower)} to ${format(entry.upper)})` : "";
  const lines = [
    `Fitted prior of true effects: family ${fit.family}, ${fit.observationCount} results, null weight ${fit.nullWeight}`,
    `  log-likelihood ${fit.logLik.toFixed(3)}, ${fit.iterations} iterations, ${fit.converged ? "converged" : "NOT converged"} (optimality gap ${fit.optimalityGap.toExponential(2)})`,
    `  null share ${percent(priorSummary.nullShare)}${interval(bootstrap?.intervals.nullShare, percent)}`,
    `  win rate P(theta > ${threshold}) ${percent(priorSummary.winRate)}${interval(bootstrap?.intervals.winRate, percent)}`,
    `  loss rate P(theta < -${threshold}) ${percent(priorSummary.lossRate)}${interval(bootstrap?.intervals.lossRate, percent)}`,
    `  mean size of real wins ${formatLift(priorSummary.meanWinSize)}, of real losses ${formatLift(priorSummary.meanLossSize)}`,
  ];
  if (fit.alternatives) {
    lines.push("  families by log-likelihood:");
    for (const alternative of fit.alternatives)
      lines.push(
        `    ${alternative.family.padEnd(9)} ${alternative.logLik.toFixed(3)}${alternative.family === fit.family ? "  (chosen)" : ""}`,
      );
  }
  if (values.posteriors !== undefined) lines.push(`  posteriors written to ${values.posteriors}`);
  lines.push(
    "",
    "Assumptions:",
    ...assumptions.map((text) => `  - ${text}`),
    ...cautions.map((text) => `  ${text}`),
  );
  io.out(lines.join("\n"));
  return 0;
}

function formatLift(value: number | null): string {
  return value === null ? "n/a" : `${(100 * value).toFixed(2)} %`;
}

function describeFamilyFit(fit: FamilyFit) {
  return {
    family: fit.family,
    logLik: fit.logLik,
    penalizedLogLik: fit.penalizedLogLik,
    iterations: fit.iterations,
    converged: fit.converged,
    optimalityGap: fit.optimalityGap,
    nullShare: fit.componentWeights[0] ?? 0,
    components: fit.prior.components.length,
  };
}

function describeComponent(component: PriorComponent): Record<string, unknown> {
  switch (component.kind) {
    case "point":
      return { kind: "point", at: component.at };
    case "normal":
      return { kind: "normal", mean: component.mean, scale: component.scale };
    case "uniform":
      return { kind: "uniform", lower: component.lower, upper: component.upper };
    case "halfNormal":
      return { kind: "halfNormal", sign: component.sign, scale: component.scale };
    case "halfT":
      return { kind: "halfT", sign: component.sign, scale: component.scale, df: component.df };
    case "truncatedNormal":
      return { ...component };
  }
}

/** Reads lift,se (or y,s) rows; every bad row is reported with its row (header = 1) and column. */
export function readObservations(
  content: string,
): { observations: Observation[] } | { message: string; issues: RowIssue[] } {
  let records: string[][];
  try {
    records = parse(content, { skip_empty_lines: true, trim: true, relax_column_count: true }) as string[][];
  } catch (error) {
    return { message: `not a readable CSV: ${(error as Error).message}`, issues: [] };
  }
  const header = (records[0] ?? []).map((name) => name.toLowerCase());
  const pairs: [string, string][] = [
    ["lift", "se"],
    ["y", "s"],
  ];
  const pair = pairs.find(([estimate, error]) => header.includes(estimate) && header.includes(error));
  if (!pair)
    return {
      message: "the header must have columns lift,se (or y,s)",
      issues: [{ row: 1, column: null, message: `found ${header.join(",") || "no columns"}` }],
    };
  const estimateIndex = header.indexOf(pair[0]);
  const errorIndex = header.indexOf(pair[1]);
  const observations: Observation[] = [];
  const issues: RowIssue[] = [];
  records.slice(1).forEach((record, index) => {
    const row = index + 2;
    const rawEstimate = record[estimateIndex] ?? "";
    const rawError = record[errorIndex] ?? "";
    const y = Number(rawEstimate);
    const s = Number(rawError);
    let ok = true;
    if (rawEstimate === "" || !Number.isFinite(y)) {
      issues.push({ row, column: pair[0], message: `must be a finite number; got "${rawEstimate}"` });
      ok = false;
    }
    if (rawError === "" || !Number.isFinite(s) || s <= 0) {
      issues.push({ row, column: pair[1], message: `must be a positive finite number; got "${rawError}"` });
      ok = false;
    }
    if (ok) observations.push({ y, s });
  });
  if (issues.length > 0) return { message: `${issues.length} bad value(s); nothing was fitted`, issues };
  if (observations.length === 0)
    return { message: "no results to fit", issues: [{ row: 2, column: null, message: "no data rows" }] };
  return { observations };
}
