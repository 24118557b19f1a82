/**
 * `plumbline experiments list --workspace NAME [--team T] [--metric KEY] [--decision D]
 * [--from DATE] [--to DATE] [--limit N] [--offset N] [--json]`: the workspace's experiments with
 * the derived lift and SE of each of their metrics and their flags (sample ratio mismatch, early
 * stop, A/A). Filters run in the database, so `total` counts every match and a page reads only its
 * own results. Works directly on the database.
 */
import { parseArgs } from "node:util";
import { asc, count, eq, inArray } from "drizzle-orm";
import { experiments, metrics, results, workspaces } from "../../db/schema.ts";
import { experimentFilterCondition } from "../../history/experiment-filters.ts";
import { parseDate } from "../../import/cell-parsers.ts";
import { decisions } from "../../import/layouts.ts";
import type { CommandIo } from "../io.ts";
import { withDatabase } from "./workspace.ts";

export const summary = "list a workspace's experiments with each metric's lift, SE and flags";

const help = `Usage:
  plumbline experiments list --workspace NAME [--team TEAM] [--metric KEY] [--decision DECISION]
                              [--from YYYY-MM-DD] [--to YYYY-MM-DD] [--limit N] [--offset N] [--json]

Shows the experiments (by start date, then key) with, for each metric, the relative lift and its
standard error as stored on import (sign-flipped for metrics where lower is better, so positive is
good), and the flags: sample ratio mismatch (SRM), stopped early, A/A test. * marks the primary
metric. Filters combine (all must hold).

  --team TEAM          only this team's experiments
  --metric KEY         only experiments with a result on this metric
  --decision DECISION  only shipped, not_shipped, iterate or pending
  --from YYYY-MM-DD    only experiments started on or after this day (needs a stored started_on)
  --to YYYY-MM-DD      only experiments started on or before this day
  --limit N            show at most N experiments (default: all)
  --offset N           skip the first N matches (with --limit, the next page is --offset N+limit)
  --json               one JSON document: {"workspace","total","offset","limit","count","experiments":[...],
                       "assumptions","cautions"}; total counts every match, count those shown`;

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
  from?: string;
  to?: string;
  limit?: string;
  offset?: string;
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
        from: { type: "string" },
        to: { type: "string" },
        limit: { type: "string" },
        offset: { type: "string" },
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
  const range = readRange(values.from, values.to);
  if (typeof range === "string") {
    io.err(`plumbline experiments list: ${range}`);
    return 2;
  }
  const limit = readWholeNumber("--limit", values.limit, 1);
  const offset = readWholeNumber("--offset", values.offset, 0);
  for (const problem of [limit, offset]) {
    if (typeof problem === "string") {
      io.err(`plumbline experiments list: ${problem}`);
      return 2;
    }
  }
  const page = { limit: limit as number | undefined, offset: (offset as number | undefined) ?? 0 };
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
      const where = experimentFilterCondition(db, workspace.id, {
        team: values.team,
        decision: decision as (typeof decisions)[number] | undefined,
        metric: values.metric,
        from: range.from,
        to: range.to,
      });
      const [totalRow] = await db.select({ n: count() }).from(experiments).where(where);
      const total = totalRow?.n ?? 0;
      const ordered = db
        .select()
        .from(experiments)
        .where(where)
        .orderBy(asc(experiments.startedOn), asc(experiments.key));
      // SQLite needs a LIMIT before an OFFSET; the largest safe integer stands for "no limit".
      const experimentRows = await ordered.limit(page.limit ?? Number.MAX_SAFE_INTEGER).offset(page.offset);
      const resultRows: {
        result: typeof results.$inferSelect;
        metric: typeof metrics.$inferSelect;
      }[] = [];
      const ids = experimentRows.map((experiment) => experiment.id);
      // Chunks keep each statement's bound variables well under SQLite's limit.
      for (let start = 0; start < ids.length; start += 500) {
        resultRows.push(
          ...(await db
            .select({ result: results, metric: metrics })
            .from(results)
            .innerJoin(metrics, eq(results.metricId, metrics.id))
            .where(inArray(results.experimentId, ids.slice(start, start + 500)))
            .orderBy(asc(metrics.key))),
        );
      }
      const byExperiment = new Map<number, typeof resultRows>();
      for (const row of resultRows) {
        const list = byExperiment.get(row.result.experimentId) ?? [];
        list.push(row);
        byExperiment.set(row.result.experimentId, list);
      }
      const listed = experimentRows.map((experiment) => {
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
      });
      if (values.json) {
        io.out(
          JSON.stringify({
            workspace: workspace.name,
            total,
            offset: page.offset,
            limit: page.limit ?? null,
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
          total > 0
            ? `${total} experiments match, none after --offset ${page.offset}.`
            : `No experiments in "${workspace.name}" match. Import some with: plumbline import FILE --workspace ${workspace.name}`,
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
      const shown =
        listed.length === total
          ? `${total} experiments`
          : `Experiments ${page.offset + 1} to ${page.offset + listed.length} of ${total}${page.offset + listed.length < total ? ` (next page: --offset ${page.offset + listed.length})` : ""}`;
      io.out(`${shown}. Assumptions: ${assumptions.join("; ")}.`);
      io.out(cautions.join(" "));
      return 0;
    },
    "plumbline experiments",
  );
}

/** The --from/--to range, or a message naming the flag at fault. */
function readRange(
  from: string | undefined,
  to: string | undefined,
): { from: string | undefined; to: string | undefined } | string {
  for (const [flag, text] of [
    ["--from", from],
    ["--to", to],
  ] as const) {
    if (text === undefined) continue;
    const parsed = parseDate(text);
    if (!parsed.ok) return `${flag}: ${parsed.message}`;
  }
  if (from !== undefined && to !== undefined && to < from)
    return `--to ${to} is before --from ${from}: the range would be empty`;
  return { from: from?.trim(), to: to?.trim() };
}

/** A whole number at least `smallest`, or a message naming the flag. */
function readWholeNumber(
  flag: string,
  text: string | undefined,
  smallest: number,
): number | undefined | string {
  if (text === undefined) return undefined;
  if (!/^\d+$/.test(text.trim()) || Number(text) < smallest)
    return `${flag} must be a whole number of at least ${smallest}; got "${text}"`;
  return Number(text);
}

function formatPercent(value: number, signed = true): string {
  const text = `${(value * 100).toFixed(2)}%`;
  return signed && value > 0 ? `+${text}` : text;
}
