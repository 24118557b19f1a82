/**
 * `plumbline experiments list --workspace NAME [--team T] [--metric KEY] [--decision D] [--json]`:
 * every experiment of the workspace with the derived lift and SE of each of its metrics and its
 * flags (sample ratio mismatch, early stop, A/A). Works directly on the database.
 */
import { parseArgs } from "node:util";
import { and, asc, eq, type SQL } from "drizzle-orm";
import { experiments, metrics, results, workspaces } from "../../db/schema.ts";
import { decisions } from "../../import/layouts.ts";
import type { CommandIo } from "../io.ts";
import { withDatabase } from "./workspace.ts";

export const summary = "list a workspace's experiments with each metric's lift, SE and flags";

const help = `Usage:
  plumbline experiments list --workspace NAME [--team TEAM] [--metric KEY] [--decision DECISION] [--json]

Shows every experiment (by start date) with, for each metric, the relative lift and its standard
error as stored on import (sign-flipped for metrics where lower is better, so positive is good),
and the flags: sample ratio mismatch (SRM), stopped early, A/A test. * marks the primary metric.

  --team TEAM          only this team's experiments
  --metric KEY         only experiments with a result on this metric
  --decision DECISION  only shipped, not_shipped, iterate or pending
  --json               one JSON document: {"workspace","count","experiments":[...],"assumptions","cautions"}`;

const assumptions = [
  "lift is relative, treatment / control - 1, sign-flipped for decrease metrics so that a positive lift is good",
  "lift_se is the first-order delta-method standard error (statistics.md section 1), or as reported",
  "sample ratio mismatch: chi-square test of the arm counts against the planned split (50/50 when not given), flagged when p < 0.0005",
];
const cautions = [
  "These are the results as reported, before any shrinkage; a significant lift is not a real lift.",
  "plumbline does not replace a statistician's review and is not for clinical or safety-critical decisions.",
];

interface Options {
  workspace?: string;
  team?: string;
  metric?: string;
  decision?: string;
  json?: boolean;
  help?: boolean;
}

export async function run(args: string[], io: CommandIo): Promise<number> {
  let parsed: { values: Options; positionals: string[] };
  try {
    parsed = parseArgs({
      args,
      strict: true,
      allowPositionals: true,
      options: {
        workspace: { type: "string" },
        team: { type: "string" },
        metric: { type: "string" },
        decision: { type: "string" },
        json: { type: "boolean" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (error) {
    io.err(`plumbline experiments: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  const { values, positionals } = parsed;
  if (values.help) {
    io.out(help);
    return 0;
  }
  if (positionals[0] !== "list" || positionals.length !== 1) {
    io.err(
      `plumbline experiments: ${positionals[0] ? `unknown action "${positionals.join(" ")}"` : "missing action"}; use list\n\n${help}`,
    );
    return 2;
  }
  if (!values.workspace) {
    io.err(`plumbline experiments list: --workspace NAME is required\n\n${help}`);
    return 2;
  }
  const decision = values.decision;
  if (decision !== undefined && !(decisions as readonly string[]).includes(decision)) {
    io.err(
      `plumbline experiments list: --decision must be one of ${decisions.join(", ")}; got "${decision}"`,
    );
    return 2;
  }
  const workspaceName = values.workspace;
  return withDatabase(
    io,
    async (db) => {
      const [workspace] = await db.select().from(workspaces).where(eq(workspaces.name, workspaceName));
      if (!workspace) {
        io.err(
          `plumbline experiments list: no workspace named "${workspaceName}" (see plumbline workspace list)`,
        );
        return 1;
      }
      const conditions: SQL[] = [eq(experiments.workspaceId, workspace.id)];
      if (values.team !== undefined) conditions.push(eq(experiments.team, values.team));
      if (decision !== undefined)
        conditions.push(eq(experiments.decision, decision as (typeof decisions)[number]));
      const experimentRows = await db
        .select()
        .from(experiments)
        .where(and(...conditions))
        .orderBy(asc(experiments.startedOn), asc(experiments.key));
      const resultRows = await db
        .select({ result: results, metric: metrics })
        .from(results)
        .innerJoin(metrics, eq(results.metricId, metrics.id))
        .innerJoin(experiments, eq(results.experimentId, experiments.id))
        .where(eq(experiments.workspaceId, workspace.id))
        .orderBy(asc(metrics.key));
      const byExperiment = new Map<number, typeof resultRows>();
      for (const row of resultRows) {
        const list = byExperiment.get(row.result.experimentId) ?? [];
        list.push(row);
        byExperiment.set(row.result.experimentId, list);
      }
      const listed = experimentRows
        .map((experiment) => {
          const rows = (byExperiment.get(experiment.id) ?? []).sort(
            (first, second) => Number(second.result.isPrimary) - Number(first.result.isPrimary),
          );
          const srm = rows.some((row) => row.result.srmFlagged);
          const flags = [
            ...(srm ? ["sample_ratio_mismatch"] : []),
            ...(experiment.stoppedEarly ? ["stopped_early"] : []),
            ...(experiment.isAa ? ["aa_test"] : []),
          ];
          return {
            key: experiment.key,
            name: experiment.name,
            team: experiment.team,
            decision: experiment.decision,
            startedOn: experiment.startedOn,
            endedOn: experiment.endedOn,
            decidedOn: experiment.decidedOn,
            stoppedEarly: experiment.stoppedEarly,
            isAa: experiment.isAa,
            flags,
            results: rows.map(({ result, metric }) => ({
              metric: metric.key,
              metricKind: metric.kind,
              direction: metric.direction,
              primary: result.isPrimary,
              lift: result.lift,
              liftSe: result.liftSe,
              absoluteDifference: result.absoluteDifference,
              inputForm: result.inputForm,
              controlN: result.controlN,
              treatmentN: result.treatmentN,
              srmPValue: result.srmPValue,
              srmFlagged: result.srmFlagged,
            })),
          };
        })
        .filter(
          (experiment) =>
            values.metric === undefined || experiment.results.some((row) => row.metric === values.metric),
        );
      if (values.json) {
        io.out(
          JSON.stringify({
            workspace: workspace.name,
            count: listed.length,
            experiments: listed,
            assumptions,
            cautions,
          }),
        );
        return 0;
      }
      if (listed.length === 0) {
        io.out(
          `No experiments in "${workspace.name}" match. Import some with: plumbline import FILE --workspace ${workspace.name}`,
        );
        return 0;
      }
      const flagLabels: Record<string, string> = {
        sample_ratio_mismatch: "SRM",
        stopped_early: "stopped early",
        aa_test: "A/A",
      };
      for (const experiment of listed) {
        const dates =
          experiment.startedOn || experiment.endedOn
            ? `  ${experiment.startedOn ?? "?"}..${experiment.endedOn ?? "?"}`
            : "";
        const flags =
          experiment.flags.length > 0
            ? `  [${experiment.flags.map((flag) => flagLabels[flag]).join(", ")}]`
            : "";
        io.out(
          `${experiment.key}  ${experiment.name}${experiment.team ? ` (${experiment.team})` : ""}  ${experiment.decision}${dates}${flags}`,
        );
        for (const result of experiment.results) {
          const srm = result.srmFlagged ? `  SRM p=${result.srmPValue?.toPrecision(2)}` : "";
          io.out(
            `  ${result.primary ? "*" : " "} ${result.metric.padEnd(24)} lift ${formatPercent(result.lift).padStart(8)}  SE ${formatPercent(result.liftSe, false).padStart(7)}  (${result.inputForm})${srm}`,
          );
        }
      }
      io.out("");
      io.out(`${listed.length} experiments. Assumptions: ${assumptions.join("; ")}.`);
      io.out(cautions.join(" "));
      return 0;
    },
    "plumbline experiments",
  );
}

function formatPercent(value: number, signed = true): string {
  const text = `${(value * 100).toFixed(2)}%`;
  return signed && value > 0 ? `+${text}` : text;
}
